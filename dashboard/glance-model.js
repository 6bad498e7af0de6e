// Pure helpers behind the glance screen: ordering, wording, geometry and the bounded
// history behind the CO sparklines. No DOM here, so vitest tests it directly.
// Every age is measured against the data time (state.nowMs), never the browser clock:
// a frozen screen must look frozen. Types: glance-model.d.ts.

/** Highest first. */
const TIER_RANK = { warning: 3, caution: 2, notice: 1 };

/** Sorted copy: warning > caution > notice, then newest raised first, then id (stable). */
export function sortAdvisories(advisories) {
  return [...advisories].sort(
    (a, b) =>
      (TIER_RANK[b.tier] ?? 0) - (TIER_RANK[a.tier] ?? 0) ||
      b.raisedAtMs - a.raisedAtMs ||
      (a.id < b.id ? -1 : a.id > b.id ? 1 : 0),
  );
}

// ---- advisory states, actions and marks ----

/**
 * The states in which an advisory is not annunciated (ISA-18.2): shelved by an operator,
 * suppressed by design, out of service. They are listed apart, never as if they were active,
 * and never hidden: a held warning is on screen like any other.
 */
export const HELD_STATES = ["shelved", "suppressed", "out-of-service"];

export function isHeld(advisory) {
  return HELD_STATES.includes(advisory.state);
}

/** Someone has to look: unacknowledged (present or returned), or latched and not yet acknowledged. */
export function needsAttention(advisory) {
  const s = advisory.state;
  return s === "unack" || s === "rtn-unack" || (s === "latched" && advisory.ackedBy === null);
}

/** Annunciated and held advisories, each sorted like sortAdvisories. */
export function splitAdvisories(advisories) {
  const sorted = sortAdvisories(advisories);
  return { annunciated: sorted.filter((a) => !isHeld(a)), held: sorted.filter(isHeld) };
}

/** Short words for the states that need one beside the title (the ordinary ones need none). */
export const STATE_WORDS = { latched: "latched", shelved: "shelved", suppressed: "suppressed", "out-of-service": "out of service" };

/**
 * The state in words. `word`: the badge beside the title, or null; `text`: the state line;
 * `detail`: the reason someone gave, or what a state means, or null; `acked`: nobody needs
 * to act on it now. Times are data times (nowMs), never the browser's clock.
 */
export function advisoryStateText(advisory, nowMs) {
  const a = advisory;
  const word = STATE_WORDS[a.state] ?? null;
  switch (a.state) {
    case "unack":
      return { word, text: "unacknowledged", detail: null, acked: false };
    case "rtn-unack":
      return { word, text: "returned to normal \u00b7 unacknowledged", detail: null, acked: false };
    case "ack": {
      const at = a.ackedAtMs !== null ? ` at ${formatWhen(a.ackedAtMs, nowMs)}` : "";
      return { word, text: `acknowledged by ${a.ackedBy ?? "?"}${at}`, detail: null, acked: true };
    }
    case "latched": {
      const acked = a.ackedBy !== null ? ` \u00b7 acknowledged by ${a.ackedBy}` : " \u00b7 unacknowledged";
      return { word, text: `returned to normal, kept until reset${acked}`, detail: null, acked: a.ackedBy !== null };
    }
    case "shelved": {
      let until = "";
      if (a.shelvedUntilMs !== null) {
        until = a.oneShot
          ? ` until it clears (at most until ${formatClock(a.shelvedUntilMs)})`
          : ` until ${formatClock(a.shelvedUntilMs)} (${formatAge(a.shelvedUntilMs - nowMs)} left)`;
      }
      const now = a.conditionActive ? "" : " \u00b7 condition now normal";
      return { word, text: `shelved by ${a.heldBy ?? "?"}${until}${now}`, detail: a.heldReason ? `reason: ${a.heldReason}` : null, acked: true };
    }
    case "suppressed":
      return {
        word,
        text: `suppressed by design: ${a.suppressedBy ?? "no reason given"}`,
        detail: "shown only while its condition is present; annunciated again if it still is when the suppression ends",
        acked: true,
      };
    case "out-of-service":
      return { word, text: `out of service \u00b7 taken out by ${a.heldBy ?? "?"}`, detail: a.heldReason ? `reason: ${a.heldReason}` : null, acked: true };
    default:
      return { word, text: String(a.state), detail: null, acked: true };
  }
}

/**
 * Tiers the glance screen offers to shelve. Warnings are left out: by default a site does not
 * let them be shelved at all (advisoryPolicy.shelveWarnings), and the screen does not know
 * the site's choice; where it is allowed, the API takes it.
 */
export const SHELVABLE_TIERS = ["notice", "caution"];

/** What the screen offers for an advisory: a subset of ack, reset, shelve, unshelve, in that order. */
export function advisoryActions(advisory) {
  const a = advisory;
  const out = [];
  if (a.state === "unack" || a.state === "rtn-unack") out.push("ack");
  if (a.state === "latched") out.push("reset");
  if ((a.state === "unack" || a.state === "ack") && a.conditionActive && SHELVABLE_TIERS.includes(a.tier)) out.push("shelve");
  if (a.state === "shelved") out.push("unshelve");
  return out;
}

/** Nuisance marks as short words (they mark, they never hide). */
export function advisoryMarks(advisory) {
  const marks = [];
  if (advisory.firstOut) marks.push("first out");
  if (advisory.chattering) marks.push("chattering");
  if (advisory.standing) marks.push("standing");
  return marks;
}

/** How long to shelve: timed (at most the site's maximum, 8 h by default) or until the condition clears. */
export const SHELVE_CHOICES = [
  { id: "15min", label: "15 min", durationS: 15 * 60 },
  { id: "1h", label: "1 h", durationS: 3600 },
  { id: "4h", label: "4 h", durationS: 4 * 3600 },
  { id: "8h", label: "8 h", durationS: 8 * 3600 },
  { id: "one-shot", label: "until it clears (one-shot)", oneShot: true },
];

const REASON_MAX_CHARS = 500;

/**
 * The request body for a command from what was typed, or the reason it cannot be sent yet.
 * Who gives it is the login session's (the daemon takes it from there, never from the body).
 * The limits are the API's (src/server/params.ts), so the form says so before the daemon does.
 */
export function commandBody(kind, { reason, choice }) {
  if (kind !== "shelve") return { body: {} };
  const why = String(reason ?? "").trim();
  if (why === "") return { error: "A reason is needed to shelve: it is shown with the advisory and kept in the record." };
  if ([...why].length > REASON_MAX_CHARS) return { error: `The reason is longer than ${REASON_MAX_CHARS} characters.` };
  const c = SHELVE_CHOICES.find((x) => x.id === choice);
  if (c === undefined) return { error: "Choose how long to shelve it." };
  return { body: c.oneShot ? { reason: why, oneShot: true } : { reason: why, durationS: c.durationS } };
}

/** "45 s", "3 min", "2 h", "2 h 05 min", "3 d 4 h"; whole units, rounded down. */
export function formatAge(ms) {
  if (!Number.isFinite(ms) || ms < 0) return "0 s";
  const s = Math.floor(ms / 1000);
  if (s < 60) return `${s} s`;
  const min = Math.floor(s / 60);
  if (min < 60) return `${min} min`;
  const h = Math.floor(min / 60);
  if (h < 24) return min % 60 === 0 ? `${h} h` : `${h} h ${String(min % 60).padStart(2, "0")} min`;
  return h % 24 === 0 ? `${Math.floor(h / 24)} d` : `${Math.floor(h / 24)} d ${h % 24} h`;
}

const MINUS = "\u2212";

/** Fixed decimals with a typographic minus; null and NaN become an em dash. */
export function formatNumber(value, digits) {
  if (value === null || value === undefined || !Number.isFinite(value)) return "\u2014";
  const text = Math.abs(value).toFixed(digits);
  // -0.0 after rounding is shown as 0.0: a sign there would be noise.
  const isZero = Number(text) === 0;
  return value < 0 && !isZero ? `${MINUS}${text}` : text;
}

/** Always signed ("+6.8", "−0.4", "±0.0"): a gradient without its sign is ambiguous. */
export function formatSigned(value, digits) {
  const text = formatNumber(value, digits);
  if (text === "\u2014" || text.startsWith(MINUS)) return text;
  return Number(text) === 0 ? `\u00b1${text}` : `+${text}`;
}

/** Local wall-clock hh:mm:ss of a data time (the plant's clock, shown where the plant is). */
export function formatClock(ms) {
  const d = new Date(ms);
  const two = (n) => String(n).padStart(2, "0");
  return `${two(d.getHours())}:${two(d.getMinutes())}:${two(d.getSeconds())}`;
}

/** A data time as the clock alone when it is within 12 h of now, else with its date (no ambiguity across days). */
export function formatWhen(ms, nowMs) {
  return Math.abs(nowMs - ms) < 12 * 3600 * 1000 ? formatClock(ms) : formatDateTime(ms);
}

export function formatDateTime(ms) {
  const d = new Date(ms);
  const two = (n) => String(n).padStart(2, "0");
  return `${d.getFullYear()}-${two(d.getMonth() + 1)}-${two(d.getDate())} ${formatClock(ms)}`;
}

/** The words shown instead of a value when its signal has gone quiet; null when it is fresh. */
export function staleText(signal, nowMs) {
  if (!signal || !signal.stale) return null;
  if (signal.receiveTimeMs === null) return "no data yet";
  return `no data ${formatAge(nowMs - signal.receiveTimeMs).replace(/ \d+ (min|h)$/, "")}`;
}

/** Inerting state words as shown (never just a colour). */
export const INERTING_WORDS = {
  inert: "inert",
  marginal: "marginal",
  "not-inert": "not inert",
  purging: "purging",
  unknown: "unknown",
};

/**
 * The abnormal inerting states borrow the tier look: marginal as caution, not inert as
 * warning; purging (O2 still above its limit, inert gas flowing) as caution.
 */
export const INERTING_TIER = { marginal: "caution", purging: "caution", "not-inert": "warning" };

/** O2 scale of the margin bar: 0 to air (21 % vol), wide enough for any reading. */
export const O2_SCALE_MAX_PCT = 21;

/**
 * Positions on the O2 bar as fractions of its width (0..1). The marginal band lies
 * just below the limit: limit − marginalBand .. limit.
 */
export function o2BarGeometry(inerting, scaleMaxPct = O2_SCALE_MAX_PCT) {
  const frac = (v) => Math.min(1, Math.max(0, v / scaleMaxPct));
  return {
    value: inerting.o2PctVol === null ? null : frac(inerting.o2PctVol),
    limit: frac(inerting.limitPctVol),
    bandStart: frac(inerting.limitPctVol - inerting.marginalBandPctPt),
  };
}

/** The dew point location with the smallest known margin (it leads), or null. */
export function lowestMargin(dewPoints) {
  let lowest = null;
  for (const p of dewPoints) {
    if (p.status !== "ok" || p.marginK === null) continue;
    if (lowest === null || p.marginK < lowest.marginK) lowest = p;
  }
  return lowest;
}

/**
 * Which screen element an advisory belongs to, from its derived key
 * ("co.bf2-outlet.gradientPpmPerMin" → { kind: "co", id: "bf2-outlet" }).
 */
export function advisoryTarget(advisory) {
  const [kind, id] = String(advisory.quantity ?? "").split(".");
  return kind && id ? { kind, id } : null;
}

/**
 * The highest tier among annunciated advisories with their condition present (unacknowledged
 * or acknowledged) pointing at one element, or null. Returned, latched and held ones do not
 * colour the element.
 */
export function worstTierFor(advisories, kind, id) {
  let worst = null;
  for (const a of advisories) {
    if (a.state !== "unack" && a.state !== "ack") continue;
    const t = advisoryTarget(a);
    if (!t || t.kind !== kind || t.id !== id) continue;
    if (worst === null || (TIER_RANK[a.tier] ?? 0) > (TIER_RANK[worst] ?? 0)) worst = a.tier;
  }
  return worst;
}

/**
 * Bounded history of one value per id (the CO sparklines). Each id keeps at most
 * `capacity` points in a ring; points older than `windowMs` before the newest data
 * time are left out when read. Memory stays fixed however long the page runs.
 */
export function createHistory(windowMs, capacity) {
  return { windowMs, capacity, rings: new Map() };
}

/** Record one value (null for "unknown": a gap in the line). Times that do not advance are ignored. */
export function recordPoint(history, id, tMs, value) {
  let ring = history.rings.get(id);
  if (ring === undefined) {
    ring = { t: new Float64Array(history.capacity), v: new Float64Array(history.capacity), start: 0, size: 0 };
    history.rings.set(id, ring);
  }
  if (ring.size > 0) {
    const last = (ring.start + ring.size - 1) % history.capacity;
    if (tMs <= ring.t[last]) return;
  }
  const at = (ring.start + ring.size) % history.capacity;
  ring.t[at] = tMs;
  ring.v[at] = value === null || value === undefined ? Number.NaN : value;
  if (ring.size < history.capacity) ring.size += 1;
  else ring.start = (ring.start + 1) % history.capacity;
}

/** Points of one id within the window ending at nowMs, oldest first: [tMs, value|null][]. */
export function readSeries(history, id, nowMs) {
  const ring = history.rings.get(id);
  if (ring === undefined) return [];
  const out = [];
  for (let i = 0; i < ring.size; i += 1) {
    const k = (ring.start + i) % history.capacity;
    if (ring.t[k] < nowMs - history.windowMs || ring.t[k] > nowMs) continue;
    out.push([ring.t[k], Number.isNaN(ring.v[k]) ? null : ring.v[k]]);
  }
  return out;
}

/** Forget ids that are no longer on screen (a config change), so the map cannot grow. */
export function pruneHistory(history, keepIds) {
  const keep = new Set(keepIds);
  for (const id of history.rings.keys()) if (!keep.has(id)) history.rings.delete(id);
}

/**
 * SVG polyline point lists for a sparkline of width × height: one list per unbroken
 * run (unknown values break the line). min/max are the data's own extremes. Time runs over the whole window so the line
 * fills from the right as history builds up.
 */
export function sparklineRuns(series, fromMs, toMs, width, height, minSpan = 0) {
  const values = series.map((p) => p[1]).filter((v) => v !== null);
  if (values.length === 0) return { runs: [], min: null, max: null };
  const min = Math.min(...values);
  const max = Math.max(...values);
  // The vertical scale spans at least minSpan (centred on the data), so analyser noise
  // of a few units does not fill the box like a real rise; a flat line sits mid-box.
  const span = Math.max(max - min, minSpan, 1e-9);
  const lo = (min + max) / 2 - span / 2;
  const runs = [];
  let run = [];
  for (const [t, v] of series) {
    if (v === null) {
      if (run.length > 0) runs.push(run.join(" "));
      run = [];
      continue;
    }
    const x = ((t - fromMs) / (toMs - fromMs)) * width;
    const y = height - ((v - lo) / span) * height;
    run.push(`${x.toFixed(1)},${y.toFixed(1)}`);
  }
  if (run.length > 0) runs.push(run.join(" "));
  return { runs, min, max };
}

// ---- operating phase and the dew point summary ----

/** Phase words as shown (our own names for the phases, DESIGN.md §3). */
export const PHASE_WORDS = {
  "standstill-empty": "standstill, empty",
  "standstill-loaded": "standstill, coal inside",
  "warm-up": "warm-up",
  inerting: "inerting",
  starting: "starting",
  grinding: "grinding",
  stopping: "stopping",
  maintenance: "maintenance",
  unknown: "unknown",
};

/**
 * The phase in words and how long it has lasted, by the data time. A phase is context, not an
 * abnormal state: it gets no colour (the hazard windows have their own advisories).
 */
export function phaseText(phase, nowMs) {
  const word = PHASE_WORDS[phase.phase] ?? String(phase.phase);
  const since = Number.isFinite(phase.sinceMs) && nowMs >= phase.sinceMs ? `for ${formatAge(nowMs - phase.sinceMs)}` : "";
  return { word, since };
}

/**
 * What the lowest dew point margin is doing: its trend and the shortest predicted time to
 * condensation. JSON has no Infinity, so a time that is "not approaching" arrives as null: a
 * known trend that is not falling says so; a falling trend without a time is left unknown.
 */
export function dewTrendText(summary) {
  // "partial": some locations unknown; the lowest known margin still leads.
  if (!summary || summary.status === "unknown" || summary.lowestMarginK === null) return null;
  const trend = summary.lowestMarginTrendKPerMin;
  if (trend === null || trend === undefined || !Number.isFinite(trend)) return { trend: "trend not known yet", time: null };
  // The words follow the figure as shown: a trend that rounds to 0.00 is steady.
  const shown = formatNumber(Math.abs(trend), 2);
  const direction = Number(shown) === 0 ? "steady" : trend < 0 ? "falling" : "rising";
  const trendText = `${direction} ${shown} K/min`;
  if (trend >= 0) return { trend: trendText, time: "condensation not approaching" };
  const t = summary.shortestTimeToCondensationS;
  if (t === null || t === undefined || !Number.isFinite(t)) return { trend: trendText, time: null };
  return { trend: trendText, time: `condensation in ${formatAge(t * 1000)} at this trend` };
}

/**
 * When the feed itself has gone quiet (no message for quietMs on an open socket), values stop
 * being live even though none is marked stale: on the data clock nothing advances without
 * samples, and a half-open connection looks open. null while updates arrive.
 */
export function quietText(lastMessageAtMs, browserNowMs, quietMs) {
  if (!(lastMessageAtMs > 0)) return null;
  const silentMs = browserNowMs - lastMessageAtMs;
  return silentMs >= quietMs ? `no update for ${formatAge(silentMs)}` : null;
}

/**
 * The signals that need attention, grouped by what is wrong with them, in the order of the
 * signal list: [{ problem: "no data 3 s", names: [...] }]. One line per problem reads at a
 * glance where twenty repetitions of the same words would not.
 */
export function signalProblems(signals, nowMs) {
  const groups = new Map();
  for (const s of signals) {
    const stale = staleText(s, nowMs);
    const problem =
      stale ??
      (s.functionCheck
        ? "function check"
        : s.quality === "bad" || s.quality === "uncertain"
          ? `${s.quality}${s.qualityReason ? ` (${s.qualityReason})` : ""}`
          : null);
    if (problem === null) continue;
    if (!groups.has(problem)) groups.set(problem, []);
    groups.get(problem).push(s.name);
  }
  return [...groups].map(([problem, names]) => ({ problem, names }));
}

/**
 * The first reason of a list joined by "; ", with how many more there are (the rest is in the
 * tooltip). A "; " inside parentheses belongs to its reason and does not split it.
 */
export function shortReason(reason) {
  const text = String(reason ?? "");
  const parts = [];
  let depth = 0;
  let start = 0;
  for (let i = 0; i < text.length; i += 1) {
    const c = text[i];
    if (c === "(") depth += 1;
    else if (c === ")") depth = Math.max(0, depth - 1);
    else if (c === ";" && text[i + 1] === " " && depth === 0) {
      parts.push(text.slice(start, i));
      start = i + 2;
    }
  }
  parts.push(text.slice(start));
  const kept = parts.filter(Boolean);
  if (kept.length <= 1) return kept[0] ?? "";
  return `${kept[0]} (+${kept.length - 1} more)`;
}
