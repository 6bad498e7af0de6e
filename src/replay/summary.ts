// The alarm-management summary of a replay: how many advisories each operator position would
// have had to handle, judged against the published benchmarks, and where the load came from.
//
//   events (advisory, nuisance, state) + span ──summarize()──▶ ReplaySummary ──render.ts──▶ text / JSON
//
// Pure: no I/O, no clock. The time span is the replay's (first to last sample replayed);
// fixed periods of 10 min and of 1 h are counted from its start, the last one possibly short.
//
// Benchmarks (DESIGN.md §5, ISA-18.2 / EEMUA 191, from memory): about 6 raises per hour per
// operator position in steady operation "very likely acceptable", 12 per hour "maximum
// manageable"; a flood is more than 10 raises in 10 min; a priority mix of about 80 / 15 / 5 %
// (here notice / caution / warning). They were written for alarm systems; millwarden's
// advisories come on top of the plant's alarms, so the same operator carries both.
import type { AdvisoryTransition, NuisanceEvent, StateChange, Tier } from "../core/types.js";
import { TIERS } from "../core/types.js";

/** What a replay keeps of the core's events: everything but the derived values. */
export type ReplayEvent = AdvisoryTransition | NuisanceEvent | StateChange;

export const TEN_MIN_MS = 600_000;
export const HOUR_MS = 3_600_000;

/** The figures the summary is judged against. All from memory (DESIGN.md §5). */
export const BENCHMARKS = {
  source: "ISA-18.2 / EEMUA 191, from memory (DESIGN.md §5)",
  /** Raises per hour per operator position, steady state: "very likely acceptable". */
  acceptablePerHour: 6,
  /** Raises per hour per operator position: "maximum manageable". */
  manageablePerHour: 12,
  /** A 10-minute period with more raises than this is in flood. */
  floodRaisesPer10Min: 10,
  /** Priority mix of raises, percent: notice, caution, warning. */
  tierMixPct: { notice: 80, caution: 15, warning: 5 } as Record<Tier, number>,
} as const;

export type RateVerdict = "very likely acceptable" | "manageable" | "over maximum manageable";

export interface PeriodFigures {
  /** Period length, ms (600,000 or 3,600,000). */
  periodMs: number;
  /** Periods of the span (the last one may be short). */
  periods: number;
  /** Raises per period as a rate over the whole span (raises · periodMs / spanMs). */
  average: number | null;
  /** Most raises in one period, and the start of the first period with that many. */
  peak: number;
  peakAtMs: number | null;
}

export interface FloodFigures {
  /** 10-minute periods with more than BENCHMARKS.floodRaisesPer10Min raises (counted here). */
  periodsOverLimit: number;
  /** Their share of all 10-minute periods of the span, percent. */
  periodsOverLimitPct: number;
  /** Floods the core reported (flood-start events). */
  floods: number;
  /** Time between the core's flood-start and flood-end (a flood still open runs to the span's end). */
  timeInFloodMs: number;
  timeInFloodPct: number;
  /** 10-minute periods that a flood reported by the core touched, and their share, percent. */
  periodsInCoreFlood: number;
  periodsInCoreFloodPct: number;
  /**
   * Periods counted over the limit here that no flood of the core touches. The core counts
   * annunciations (raises, and returns to unacknowledged from a shelve or a suppression: a
   * superset of the raises counted here) in a sliding window, which at the 11th raise of a
   * fixed period still holds all of them: a period over the limit must lie in a flood of the
   * core, so anything but 0 means the two disagree (or the core did not report floods).
   */
  periodsOverLimitOutsideCoreFlood: number;
}

export interface PositionSummary {
  position: string;
  raises: number;
  /** Raises per hour over the span; null for a span of no length. */
  perHour: number | null;
  verdict: RateVerdict | null;
  per10Min: PeriodFigures;
  perHourPeriods: PeriodFigures;
  flood: FloodFigures;
}

export interface ChatterSummary {
  advisoryId: string;
  position: string;
  /** Chatter events (episodes) the core reported. */
  episodes: number;
  /** Most raises the core counted in one episode's window. */
  maxCount: number;
  /** Time from each chatter to its chatter-end (or the span's end). */
  chatteringMs: number;
  firstAtMs: number;
}

export interface StandingSummary {
  advisoryId: string;
  position: string;
  /** First standing event: the advisory had then been active longer than the standing limit. */
  firstAtMs: number;
  reports: number;
}

export interface TierShare {
  tier: Tier;
  raises: number;
  /** Share of all raises, percent; null without raises. */
  pct: number | null;
  benchmarkPct: number;
}

export interface RuleCount {
  ruleId: string;
  raises: number;
  pct: number;
  byTier: Record<Tier, number>;
}

export interface StateTime {
  /** The state's value; null while it could not be told. */
  value: string | null;
  ms: number;
  pct: number;
}

export interface StateSummary {
  /** The state key, e.g. "phase.vm2", "inerting.bf2". */
  key: string;
  /** The part before the first dot ("phase", "inerting", "analyser", ...). */
  family: string;
  /** The part after it: the unit (or analyser) id. */
  subject: string;
  /** From the span's start to the first change reported for the key. */
  unreportedMs: number;
  /** Longest first, then by value. */
  times: StateTime[];
}

export interface ReplaySummary {
  fromMs: number;
  toMs: number;
  spanMs: number;
  /** The operator position the summary is limited to, or null for all. */
  position: string | null;
  raises: number;
  /** Every advisory transition in the span, by kind (sorted by kind). */
  transitions: Record<string, number>;
  positions: PositionSummary[];
  tiers: TierShare[];
  topRules: RuleCount[];
  chattering: ChatterSummary[];
  standing: StandingSummary[];
  states: StateSummary[];
  /** Events with a time outside the span, left out of every figure. */
  eventsOutsideSpan: number;
  benchmarks: typeof BENCHMARKS;
}

export interface SummaryOptions {
  /** Positions to list even without a raise (e.g. every position of the config). */
  positions?: readonly string[];
  /** Limit advisory figures to this operator position. The states (per unit) are not limited. */
  position?: string;
  /** How many rules the top list keeps. Default 10. */
  topRules?: number;
}

export function verdictOf(perHour: number): RateVerdict {
  if (perHour <= BENCHMARKS.acceptablePerHour) return "very likely acceptable";
  if (perHour <= BENCHMARKS.manageablePerHour) return "manageable";
  return "over maximum manageable";
}

/** Period index of a time within the span: 0 .. n−1 (the span's end falls in the last one). */
function periodIndex(tMs: number, fromMs: number, periodMs: number, n: number): number {
  return Math.min(n - 1, Math.floor((tMs - fromMs) / periodMs));
}

function periodCount(spanMs: number, periodMs: number): number {
  return Math.max(1, Math.ceil(spanMs / periodMs));
}

function periodFigures(raiseTimes: readonly number[], fromMs: number, spanMs: number, periodMs: number): { fig: PeriodFigures; counts: Int32Array } {
  const n = periodCount(spanMs, periodMs);
  const counts = new Int32Array(n);
  for (const t of raiseTimes) counts[periodIndex(t, fromMs, periodMs, n)]!++;
  let peak = 0;
  let peakAt = -1;
  for (let i = 0; i < n; i++) {
    if (counts[i]! > peak) {
      peak = counts[i]!;
      peakAt = i;
    }
  }
  return {
    fig: {
      periodMs,
      periods: n,
      average: spanMs > 0 ? (raiseTimes.length * periodMs) / spanMs : null,
      peak,
      peakAtMs: peakAt < 0 ? null : fromMs + peakAt * periodMs,
    },
    counts,
  };
}

const pct = (part: number, whole: number): number => (whole > 0 ? (100 * part) / whole : 0);

/** Intervals [start, end] from paired start / end events (an open one runs to `endMs`). */
function intervals<E extends { atMs: number }>(events: readonly E[], isStart: (e: E) => boolean, isEnd: (e: E) => boolean, endMs: number): { startMs: number; endMs: number; first: E }[] {
  const out: { startMs: number; endMs: number; first: E }[] = [];
  let open: { startMs: number; first: E } | null = null;
  for (const e of events) {
    if (isStart(e)) {
      // A second start while open is the same episode (the core reports it again).
      if (open === null) open = { startMs: e.atMs, first: e };
    } else if (isEnd(e) && open !== null) {
      out.push({ startMs: open.startMs, endMs: e.atMs, first: open.first });
      open = null;
    }
  }
  if (open !== null) out.push({ startMs: open.startMs, endMs: Math.max(open.startMs, endMs), first: open.first });
  return out;
}

function floodFigures(counts: Int32Array, floodEvents: readonly NuisanceEvent[], fromMs: number, toMs: number): FloodFigures {
  const n = counts.length;
  const spanMs = toMs - fromMs;
  const floods = intervals(
    floodEvents,
    (e) => e.type === "flood-start",
    (e) => e.type === "flood-end",
    toMs,
  );
  const touched = new Uint8Array(n);
  let timeInFloodMs = 0;
  for (const f of floods) {
    timeInFloodMs += f.endMs - f.startMs;
    const first = periodIndex(f.startMs, fromMs, TEN_MIN_MS, n);
    // The last millisecond in flood decides the last period (a flood ending on a boundary did not reach the next one).
    const last = f.endMs > f.startMs ? periodIndex(f.endMs - 1, fromMs, TEN_MIN_MS, n) : first;
    for (let i = first; i <= last; i++) touched[i] = 1;
  }
  let over = 0;
  let outside = 0;
  let inCore = 0;
  for (let i = 0; i < n; i++) {
    if (touched[i] === 1) inCore++;
    if (counts[i]! > BENCHMARKS.floodRaisesPer10Min) {
      over++;
      if (touched[i] !== 1) outside++;
    }
  }
  return {
    periodsOverLimit: over,
    periodsOverLimitPct: pct(over, n),
    floods: floods.length,
    timeInFloodMs,
    timeInFloodPct: pct(timeInFloodMs, spanMs),
    periodsInCoreFlood: inCore,
    periodsInCoreFloodPct: pct(inCore, n),
    periodsOverLimitOutsideCoreFlood: outside,
  };
}

const byTime = <E extends { atMs: number }>(a: E, b: E): number => a.atMs - b.atMs;

/**
 * The summary of a replay's events over [fromMs, toMs]. `positionOf` gives the operator
 * position of an advisory (the rule's `position`, "control-room" by default); nuisance events
 * carry their own. Events are taken in time order (a stable sort keeps the core's order
 * within one tick).
 */
export function summarize(
  events: readonly ReplayEvent[],
  span: { fromMs: number; toMs: number },
  positionOf: (advisoryId: string) => string,
  opts: SummaryOptions = {},
): ReplaySummary {
  const { fromMs, toMs } = span;
  if (!(Number.isFinite(fromMs) && Number.isFinite(toMs) && fromMs <= toMs)) {
    throw new RangeError(`summarize: expected a span with fromMs ≤ toMs (epoch ms), found ${String(fromMs)} .. ${String(toMs)}`);
  }
  const spanMs = toMs - fromMs;
  const only = opts.position ?? null;
  const inSpan = events.filter((e) => e.atMs >= fromMs && e.atMs <= toMs).sort(byTime);
  const eventsOutsideSpan = events.length - inSpan.length;

  const transitions = inSpan.filter((e): e is AdvisoryTransition => e.kind === "advisory" && (only === null || positionOf(e.advisoryId) === only));
  const nuisance = inSpan.filter((e): e is NuisanceEvent => e.kind === "nuisance" && (only === null || e.position === only));
  const raises = transitions.filter((e) => e.transition === "raise");

  const transitionCounts: Record<string, number> = {};
  for (const k of [...new Set(transitions.map((e) => e.transition))].sort()) transitionCounts[k] = transitions.filter((e) => e.transition === k).length;

  // Per position: the configured ones, and any seen in raises or nuisance events.
  const names = new Set<string>(only === null ? (opts.positions ?? []) : [only]);
  const raisesBy = new Map<string, number[]>();
  for (const r of raises) {
    const p = positionOf(r.advisoryId);
    names.add(p);
    let list = raisesBy.get(p);
    if (list === undefined) raisesBy.set(p, (list = []));
    list.push(r.atMs);
  }
  for (const e of nuisance) names.add(e.position);
  const positions: PositionSummary[] = [...names].sort().map((position) => {
    const times = raisesBy.get(position) ?? [];
    const ten = periodFigures(times, fromMs, spanMs, TEN_MIN_MS);
    const hour = periodFigures(times, fromMs, spanMs, HOUR_MS);
    const perHour = spanMs > 0 ? (times.length * HOUR_MS) / spanMs : null;
    const floodEvents = nuisance.filter((e) => e.position === position && (e.type === "flood-start" || e.type === "flood-end"));
    return {
      position,
      raises: times.length,
      perHour,
      verdict: perHour === null ? null : verdictOf(perHour),
      per10Min: ten.fig,
      perHourPeriods: hour.fig,
      flood: floodFigures(ten.counts, floodEvents, fromMs, toMs),
    };
  });

  const tiers: TierShare[] = TIERS.map((tier) => {
    const n = raises.filter((r) => r.tier === tier).length;
    return { tier, raises: n, pct: raises.length > 0 ? pct(n, raises.length) : null, benchmarkPct: BENCHMARKS.tierMixPct[tier] };
  });

  const rules = new Map<string, RuleCount>();
  for (const r of raises) {
    let c = rules.get(r.ruleId);
    if (c === undefined) rules.set(r.ruleId, (c = { ruleId: r.ruleId, raises: 0, pct: 0, byTier: { notice: 0, caution: 0, warning: 0 } }));
    c.raises++;
    c.byTier[r.tier]++;
  }
  const topRules = [...rules.values()]
    .map((c) => ({ ...c, pct: pct(c.raises, raises.length) }))
    .sort((a, b) => b.raises - a.raises || (a.ruleId < b.ruleId ? -1 : a.ruleId > b.ruleId ? 1 : 0))
    .slice(0, opts.topRules ?? 10);

  // Chatter per advisory: episodes from chatter to chatter-end.
  const chatterIds = [...new Set(nuisance.filter((e) => e.type === "chatter" && e.advisoryId !== null).map((e) => e.advisoryId as string))].sort();
  const chattering: ChatterSummary[] = chatterIds.map((id) => {
    const own = nuisance.filter((e) => e.advisoryId === id && (e.type === "chatter" || e.type === "chatter-end"));
    const starts = own.filter((e) => e.type === "chatter");
    const eps = intervals(
      own,
      (e) => e.type === "chatter",
      (e) => e.type === "chatter-end",
      toMs,
    );
    return {
      advisoryId: id,
      position: starts[0]!.position,
      episodes: starts.length,
      maxCount: Math.max(...starts.map((e) => e.count)),
      chatteringMs: eps.reduce((s, e) => s + (e.endMs - e.startMs), 0),
      firstAtMs: starts[0]!.atMs,
    };
  });

  const standingIds = [...new Set(nuisance.filter((e) => e.type === "standing" && e.advisoryId !== null).map((e) => e.advisoryId as string))].sort();
  const standing: StandingSummary[] = standingIds.map((id) => {
    const own = nuisance.filter((e) => e.type === "standing" && e.advisoryId === id);
    return { advisoryId: id, position: own[0]!.position, firstAtMs: own[0]!.atMs, reports: own.length };
  });

  return {
    fromMs,
    toMs,
    spanMs,
    position: only,
    raises: raises.length,
    transitions: transitionCounts,
    positions,
    tiers,
    topRules,
    chattering,
    standing,
    states: stateTimes(
      inSpan.filter((e): e is StateChange => e.kind === "state"),
      fromMs,
      toMs,
    ),
    eventsOutsideSpan,
    benchmarks: BENCHMARKS,
  };
}

const FAMILY_ORDER = ["phase", "inerting"];

/** Time in each value of each state key: from a change to the next change of that key, or to the span's end. */
function stateTimes(changes: readonly StateChange[], fromMs: number, toMs: number): StateSummary[] {
  const byKey = new Map<string, StateChange[]>();
  for (const c of changes) {
    let list = byKey.get(c.key);
    if (list === undefined) byKey.set(c.key, (list = []));
    list.push(c);
  }
  const spanMs = toMs - fromMs;
  const out: StateSummary[] = [];
  for (const [key, list] of byKey) {
    const dot = key.indexOf(".");
    const family = dot < 0 ? key : key.slice(0, dot);
    const subject = dot < 0 ? "" : key.slice(dot + 1);
    // null is a value of its own ("cannot be told"); a Map keeps it apart from the text "null".
    const ms = new Map<string | null, number>();
    for (let i = 0; i < list.length; i++) {
      const until = i + 1 < list.length ? list[i + 1]!.atMs : toMs;
      const v = list[i]!.value;
      ms.set(v, (ms.get(v) ?? 0) + (until - list[i]!.atMs));
    }
    const times = [...ms]
      .map(([value, t]) => ({ value, ms: t, pct: pct(t, spanMs) }))
      .sort((a, b) => b.ms - a.ms || compareNullable(a.value, b.value));
    out.push({ key, family, subject, unreportedMs: list[0]!.atMs - fromMs, times });
  }
  const rank = (f: string) => {
    const i = FAMILY_ORDER.indexOf(f);
    return i < 0 ? FAMILY_ORDER.length : i;
  };
  return out.sort((a, b) => (a.subject < b.subject ? -1 : a.subject > b.subject ? 1 : 0) || rank(a.family) - rank(b.family) || (a.key < b.key ? -1 : a.key > b.key ? 1 : 0));
}

function compareNullable(a: string | null, b: string | null): number {
  if (a === b) return 0;
  if (a === null) return 1;
  if (b === null) return -1;
  return a < b ? -1 : 1;
}
