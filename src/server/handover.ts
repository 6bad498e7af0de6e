// The shift handover (GET /api/handover?hours=8|12): what happened in the last hours of data
// time, for the person taking over. Pure: the daemon hands in the historian's answers
// (transitions, state changes, the extremes of a few derived series) and the span; nothing
// here reads the clock or the store, so tests build the inputs by hand.
import type { AdvisoryTransition, StateChange, Tier, TransitionKind } from "../core/types.js";
import { tierRank } from "../core/types.js";

/** The two shift lengths the page offers. */
export const HANDOVER_HOURS = [8, 12] as const;
export type HandoverHours = (typeof HANDOVER_HOURS)[number];

/** One point of a derived series; a reduced point may carry the band it stands for. */
export interface SeriesPoint {
  tMs: number;
  value: number | null;
  min?: number | null;
  max?: number | null;
}

/** What the handover needs to know about the plant (from the state and the config). */
export interface HandoverPlant {
  /** Units by id and name; the ones with an oxygen section have an O2 margin key. */
  units: { id: string; name: string; hasOxygen: boolean }[];
  dewPoints: { id: string; name: string; unitId: string | null }[];
  coPoints: { id: string; name: string; unitId: string | null }[];
}

export interface HandoverInput {
  fromMs: number;
  toMs: number;
  plant: HandoverPlant;
  /** Advisory transitions with fromMs ≤ atMs ≤ toMs, oldest first. */
  transitions: readonly AdvisoryTransition[];
  /** State changes up to toMs, oldest first; the earlier ones tell the state at fromMs. */
  states: readonly StateChange[];
  /** A derived series over [fromMs, toMs]: dewpoint.<id>.marginK, o2.<unit>.marginPctPt, co.<id>.gradientPpmPerMin. */
  series(key: string): readonly SeriesPoint[];
}

/** Something a person did with an advisory: who, when, what, and the note or reason. */
export interface HandoverAction {
  atMs: number;
  kind: TransitionKind;
  by: string;
  why: string;
}

export interface HandoverAdvisory {
  advisoryId: string;
  ruleId: string;
  /** Raises (and re-raises) within the span. */
  raises: number;
  firstRaiseMs: number | null;
  /** The highest tier it reached within the span. */
  highestTier: Tier;
  /** The highest value seen at a raise or escalation, with the limit then crossed. */
  worstValue: number | null;
  worstLimit: number | null;
  /** Acknowledgements, shelves, resets, out of service ... in time order. */
  actions: HandoverAction[];
  /** Its state after the span's last transition. */
  stateAtEnd: AdvisoryTransition["to"];
}

/** The extreme of one series over the span (null value: no usable point). */
export interface HandoverExtreme {
  key: string;
  id: string;
  name: string;
  unitId: string | null;
  value: number | null;
  atMs: number | null;
  points: number;
}

export interface HandoverStateTime {
  value: string | null;
  ms: number;
}

export interface HandoverStates {
  /** phase.<unit> or inerting.<unit>. */
  key: string;
  unitId: string;
  /** Time from fromMs for which no state was on record. */
  unrecordedMs: number;
  /** Longest first, then by value. */
  times: HandoverStateTime[];
}

export interface HandoverOutage {
  analyserId: string;
  value: string | null;
  startMs: number;
  /** null: still out at the span's end. */
  endMs: number | null;
  /** Within the span. */
  durationMs: number;
}

export interface Handover {
  advisoryOnly: string;
  fromMs: number;
  toMs: number;
  hours: number;
  advisories: HandoverAdvisory[];
  /** Highest CO gradient per point (ppm/min). */
  coGradientPeaks: HandoverExtreme[];
  /** Lowest dew point margin per location (K), with its unit. */
  dewPointMarginLows: HandoverExtreme[];
  /** Lowest O2 margin to the governing limit per unit (%-pt). */
  o2MarginLows: HandoverExtreme[];
  phases: HandoverStates[];
  inerting: HandoverStates[];
  analyserOutages: HandoverOutage[];
}

export const HANDOVER_ADVISORY_ONLY =
  "ADVISORY ONLY: a summary of what millwarden computed, not a record of the protection system. The plant's certified protection system governs; thresholds come from the site's own hazard study.";

const HUMAN_ACTIONS: ReadonlySet<TransitionKind> = new Set(["ack", "reset", "shelve", "unshelve", "out-of-service", "return-to-service"]);

function advisorySummaries(transitions: readonly AdvisoryTransition[]): HandoverAdvisory[] {
  const by = new Map<string, HandoverAdvisory>();
  for (const t of transitions) {
    let a = by.get(t.advisoryId);
    if (a === undefined) {
      a = { advisoryId: t.advisoryId, ruleId: t.ruleId, raises: 0, firstRaiseMs: null, highestTier: t.tier, worstValue: null, worstLimit: null, actions: [], stateAtEnd: t.to };
      by.set(t.advisoryId, a);
    }
    a.stateAtEnd = t.to;
    if (t.transition === "raise") {
      a.raises++;
      a.firstRaiseMs ??= t.atMs;
    }
    if (t.transition === "raise" || t.transition === "escalate") {
      if (tierRank(t.tier) > tierRank(a.highestTier)) a.highestTier = t.tier;
      // The worst is the one farthest past its limit, whichever the rule's direction.
      if (t.value !== null && Number.isFinite(t.limit)) {
        const excess = t.value >= t.limit ? t.value - t.limit : t.limit - t.value;
        const prev = a.worstValue === null || a.worstLimit === null ? -1 : Math.abs(a.worstValue - a.worstLimit);
        if (excess > prev) {
          a.worstValue = t.value;
          a.worstLimit = t.limit;
        }
      }
    }
    if (HUMAN_ACTIONS.has(t.transition) && t.by !== "millwarden") a.actions.push({ atMs: t.atMs, kind: t.transition, by: t.by, why: t.why });
  }
  // Only advisories that were raised or handled within the span.
  return [...by.values()].filter((a) => a.raises > 0 || a.actions.length > 0).sort((x, y) => tierRank(y.highestTier) - tierRank(x.highestTier) || (x.firstRaiseMs ?? Infinity) - (y.firstRaiseMs ?? Infinity) || (x.advisoryId < y.advisoryId ? -1 : 1));
}

/** The lowest (or highest) value over the span; a point's band counts, so a reduced trend keeps its extremes. */
export function extreme(points: readonly SeriesPoint[], fromMs: number, toMs: number, want: "min" | "max"): { value: number | null; atMs: number | null; points: number } {
  let best: number | null = null;
  let atMs: number | null = null;
  let n = 0;
  for (const p of points) {
    if (p.tMs < fromMs || p.tMs > toMs) continue;
    const v = want === "min" ? (p.min ?? p.value) : (p.max ?? p.value);
    if (v === null || !Number.isFinite(v)) continue;
    n++;
    if (best === null || (want === "min" ? v < best : v > best)) {
      best = v;
      atMs = p.tMs;
    }
  }
  return { value: best, atMs, points: n };
}

/** Time in each value of one state key within [fromMs, toMs], from its changes (oldest first, any before fromMs included). */
export function stateTimes(changes: readonly StateChange[], fromMs: number, toMs: number): { unrecordedMs: number; times: HandoverStateTime[] } {
  const ms = new Map<string | null, number>();
  let current: { value: string | null; sinceMs: number } | null = null;
  let unrecordedMs = 0;
  const close = (untilMs: number): void => {
    const start = current === null ? fromMs : Math.max(current.sinceMs, fromMs);
    const end = Math.min(untilMs, toMs);
    if (end <= start) return;
    if (current === null) unrecordedMs += end - start;
    else ms.set(current.value, (ms.get(current.value) ?? 0) + (end - start));
  };
  for (const c of changes) {
    if (c.atMs > toMs) break;
    if (c.atMs > fromMs) close(c.atMs);
    current = { value: c.value, sinceMs: c.atMs };
  }
  close(toMs);
  const times = [...ms].map(([value, t]) => ({ value, ms: t })).sort((a, b) => b.ms - a.ms || String(a.value).localeCompare(String(b.value)));
  return { unrecordedMs, times };
}

function groupByKey(states: readonly StateChange[]): Map<string, StateChange[]> {
  const out = new Map<string, StateChange[]>();
  for (const s of states) {
    let list = out.get(s.key);
    if (list === undefined) out.set(s.key, (list = []));
    list.push(s);
  }
  return out;
}

/** Analyser outages: every stretch in a state other than "ok" that overlaps the span. */
export function analyserOutages(byKey: ReadonlyMap<string, readonly StateChange[]>, fromMs: number, toMs: number): HandoverOutage[] {
  const out: HandoverOutage[] = [];
  for (const [key, list] of byKey) {
    if (!key.startsWith("analyser.")) continue;
    const analyserId = key.slice("analyser.".length);
    for (let i = 0; i < list.length; i++) {
      const c = list[i]!;
      if (c.atMs > toMs) break;
      if (c.value === "ok") continue;
      const next = list[i + 1];
      const endMs = next !== undefined && next.atMs <= toMs ? next.atMs : null;
      if (endMs !== null && endMs <= fromMs) continue;
      // A run of non-ok states (function check, then stale ...) is one stretch per state, as reported.
      out.push({ analyserId, value: c.value, startMs: c.atMs, endMs, durationMs: (endMs ?? toMs) - Math.max(c.atMs, fromMs) });
    }
  }
  return out.sort((a, b) => a.startMs - b.startMs || (a.analyserId < b.analyserId ? -1 : 1));
}

export function computeHandover(input: HandoverInput): Handover {
  const { fromMs, toMs, plant } = input;
  if (!(Number.isFinite(fromMs) && Number.isFinite(toMs) && fromMs < toMs)) {
    throw new RangeError(`computeHandover: expected finite fromMs < toMs, found ${fromMs} and ${toMs}`);
  }
  const ext = (key: string, id: string, name: string, unitId: string | null, want: "min" | "max"): HandoverExtreme => ({
    key,
    id,
    name,
    unitId,
    ...extreme(input.series(key), fromMs, toMs, want),
  });
  const byKey = groupByKey(input.states);
  const statesOf = (family: "phase" | "inerting"): HandoverStates[] =>
    [...byKey]
      .filter(([key]) => key.startsWith(`${family}.`))
      .map(([key, list]) => ({ key, unitId: key.slice(family.length + 1), ...stateTimes(list, fromMs, toMs) }))
      .sort((a, b) => (a.unitId < b.unitId ? -1 : a.unitId > b.unitId ? 1 : 0));
  return {
    advisoryOnly: HANDOVER_ADVISORY_ONLY,
    fromMs,
    toMs,
    hours: (toMs - fromMs) / 3_600_000,
    advisories: advisorySummaries(input.transitions.filter((t) => t.atMs >= fromMs && t.atMs <= toMs)),
    coGradientPeaks: plant.coPoints.map((p) => ext(`co.${p.id}.gradientPpmPerMin`, p.id, p.name, p.unitId, "max")),
    dewPointMarginLows: plant.dewPoints.map((d) => ext(`dewpoint.${d.id}.marginK`, d.id, d.name, d.unitId, "min")),
    o2MarginLows: plant.units.filter((u) => u.hasOxygen).map((u) => ext(`o2.${u.id}.marginPctPt`, u.id, u.name, u.id, "min")),
    phases: statesOf("phase"),
    inerting: statesOf("inerting"),
    analyserOutages: analyserOutages(byKey, fromMs, toMs),
  };
}
