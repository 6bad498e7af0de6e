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

/** The highest tier among active advisories pointing at one element, or null. */
export function worstTierFor(advisories, kind, id) {
  let worst = null;
  for (const a of advisories) {
    if (a.state === "normal" || a.state === "rtn-unack") continue;
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
