// Pure helpers behind the trends page: which series exist, what a URL asks for, how the
// chosen series fall into panes, which limits and advisory marks belong on them, and how a
// /api/trend answer becomes plot columns. No DOM, no fetch, no clock: vitest tests it
// directly. Types: trends-model.d.ts.
//
// Time is always the data's own (state.nowMs): on a replay or an accelerated demo the box's
// clock says nothing about the data.

/** The ranges offered, newest data at the right edge. */
export const RANGES = [
  { id: "1h", label: "1 h", ms: 3600_000 },
  { id: "8h", label: "8 h", ms: 8 * 3600_000 },
  { id: "24h", label: "24 h", ms: 24 * 3600_000 },
  { id: "7d", label: "7 days", ms: 7 * 24 * 3600_000 },
];

export const DEFAULT_RANGE = "8h";

/** At most this many series at once: more lines than this on a shift's trend are read by nobody. */
export const MAX_SERIES = 12;

/**
 * Every series the page offers, from GET /api/state: the raw signals and the derived keys of
 * each family (DEVELOPERS.md, "Derived keys"). Each: key (for /api/trend), label, unit, group.
 * A derived key the daemon does not know answers 400 UNKNOWN_SERIES; the page then says so.
 */
export function seriesCatalog(state) {
  const out = [];
  const add = (key, label, unit, group) => out.push({ key, label, unit, group });
  const unitName = (id) => state.units?.find((u) => u.id === id)?.name ?? id;
  for (const u of state.units ?? []) {
    if (!u.inerting) continue;
    add(`o2.${u.id}.o2PctVol`, `O2 ${unitName(u.id)} (${u.inerting.basis}, against its limit)`, "% vol", "Oxygen");
    add(`o2.${u.id}.marginPctPt`, `O2 margin to the limit, ${unitName(u.id)}`, "%-pt", "Oxygen");
  }
  for (const p of state.coPoints ?? []) {
    add(p.signal, `CO ${p.name}`, "ppm", "CO");
    add(`co.${p.id}.gradientPpmPerMin`, `CO rate of rise ${p.name}`, "ppm/min", "CO");
    add(`co.${p.id}.riseAboveBaselinePpm`, `CO above baseline ${p.name}`, "ppm", "CO");
  }
  for (const r of state.coRises ?? []) add(`co-rise.${r.id}.risePpm`, r.name, "ppm", "CO");
  if ((state.dewPoints ?? []).length > 0) add("dewpoint.lowest.marginK", "Lowest dew point margin", "K", "Dew point");
  for (const d of state.dewPoints ?? []) {
    add(`dewpoint.${d.id}.marginK`, `Dew point margin ${d.name}`, "K", "Dew point");
    add(`dewpoint.${d.id}.dewPointC`, `Dew point ${d.name}`, "°C", "Dew point");
  }
  for (const a of state.acidDewPoints ?? []) add(`aciddewpoint.${a.id}.marginK`, `Acid dew point margin ${a.name ?? a.id}`, "K", "Dew point");
  for (const m of state.moistureSources ?? []) add(`moisture.${m.id}.h2oPctVol`, `H2O ${m.name}`, "% vol", "Moisture");
  const taken = new Set(out.map((s) => s.key));
  for (const s of state.signals ?? []) {
    if (!taken.has(s.id)) add(s.id, s.name, s.unit, "Signals");
  }
  return out;
}

/**
 * What the page shows before anyone chooses: every unit's O2 against its limit, CO and its
 * rate of rise at every point, and the lowest dew point margin (the glance screen's content).
 */
export function defaultSelection(catalog, state) {
  const keys = new Set(catalog.map((s) => s.key));
  const points = state.coPoints ?? [];
  const wanted = [
    ...points.map((p) => p.signal),
    ...points.map((p) => `co.${p.id}.gradientPpmPerMin`),
    ...(state.units ?? []).filter((u) => u.inerting).map((u) => `o2.${u.id}.o2PctVol`),
    "dewpoint.lowest.marginK",
  ];
  return [...new Set(wanted.filter((k) => keys.has(k)))].slice(0, MAX_SERIES);
}

/**
 * The page's state from its URL (?range=8h&series=a,b&from=T&to=T): unknown series are
 * dropped and reported, a zoom window (from/to, epoch ms) is kept only when it is sane.
 */
export function parseQuery(search, catalog, state) {
  const q = new URLSearchParams(search);
  const range = RANGES.some((r) => r.id === q.get("range")) ? q.get("range") : DEFAULT_RANGE;
  const known = new Set(catalog.map((s) => s.key));
  const asked = (q.get("series") ?? "").split(",").map((s) => s.trim()).filter(Boolean);
  const series = [...new Set(asked.filter((k) => known.has(k)))].slice(0, MAX_SERIES);
  const unknown = asked.filter((k) => !known.has(k));
  const from = Number(q.get("from"));
  const to = Number(q.get("to"));
  const zoom = q.has("from") && q.has("to") && Number.isFinite(from) && Number.isFinite(to) && from < to ? { fromMs: from, toMs: to } : null;
  return { range, series: asked.length === 0 ? defaultSelection(catalog, state) : series, unknown, zoom };
}

/** The URL query for a page state (the inverse of parseQuery). */
export function buildQuery({ range, series, zoom }) {
  const q = new URLSearchParams();
  q.set("range", range);
  q.set("series", series.join(","));
  if (zoom) {
    q.set("from", String(Math.round(zoom.fromMs)));
    q.set("to", String(Math.round(zoom.toMs)));
  }
  return `?${q.toString().replaceAll("%2C", ",")}`;
}

/** The time window shown: the zoom if any, else the range ending at the data's now. */
export function timeWindow(range, zoom, nowMs) {
  if (zoom) return { fromMs: zoom.fromMs, toMs: zoom.toMs };
  const r = RANGES.find((x) => x.id === range) ?? RANGES.find((x) => x.id === DEFAULT_RANGE);
  return { fromMs: nowMs - r.ms, toMs: nowMs };
}

/**
 * The chosen series grouped into panes, one per engineering unit, in the order chosen: series
 * of one unit share a y scale, and every pane shares the one time axis.
 */
export function panesFor(series, catalog) {
  const byKey = new Map(catalog.map((s) => [s.key, s]));
  const panes = [];
  for (const key of series) {
    const s = byKey.get(key);
    if (!s) continue;
    let pane = panes.find((p) => p.unit === s.unit);
    if (!pane) {
      pane = { unit: s.unit, series: [] };
      panes.push(pane);
    }
    pane.series.push(s);
  }
  return panes;
}

/**
 * Line styles for the pens of one pane. Dark, muted hues that none of the tier colours uses,
 * and each with its own dash pattern, so a pen is told by its pattern as well as its colour
 * (every hue has at least 7:1 contrast on the white plot, WCAG 2 relative luminance).
 */
export const PENS = [
  { stroke: "#17191b", dash: [] },
  { stroke: "#5b3a8c", dash: [12, 6] },
  { stroke: "#0b5e59", dash: [3, 4] },
  { stroke: "#6b4012", dash: [14, 4, 3, 4] },
  { stroke: "#3d4f1a", dash: [22, 6] },
  { stroke: "#4a4f53", dash: [6, 3, 6, 9] },
];

/**
 * One /api/trend answer as plot columns: times, values, and the band each downsampled point
 * stands for (min, max; the value where the point is a single sample). Bad samples become
 * gaps (null), never a line through them.
 */
export function trendColumns(points) {
  const t = [];
  const v = [];
  const lo = [];
  const hi = [];
  let banded = false;
  for (const p of points) {
    const [tMs, value, quality, min, max] = p;
    const bad = quality === "bad" || quality === "unknown" || value === null;
    t.push(tMs);
    v.push(bad ? null : value);
    if (p.length >= 5 && !bad) banded = true;
    lo.push(bad ? null : (min ?? value));
    hi.push(bad ? null : (max ?? value));
  }
  return { t, v, lo, hi, banded };
}

/**
 * Limits known for a series, from what the daemon tells: an O2 limit and its marginal band from
 * the unit's inerting view; for a rule's quantity, the threshold of each tier met so far (active
 * advisories carry their quantity and their present tier's limit; the stored transitions carry
 * the limit of every tier they reached, named by rule id); and, with the configured rules of
 * GET /api/rules, every tier of every rule on the key, raised or not.
 * Each: { value, tier|null, label }. Highest tier first.
 */
export function limitsFor(key, state, history = [], configured = []) {
  const out = [];
  const o2 = /^o2\.([^.]+)\.(o2PctVol|marginPctPt)$/.exec(key);
  if (o2) {
    const inv = state.units?.find((u) => u.id === o2[1])?.inerting;
    if (inv && Number.isFinite(inv.limitPctVol)) {
      if (o2[2] === "o2PctVol") {
        out.push({ value: inv.limitPctVol, tier: "warning", label: `O2 limit ${inv.limitPctVol} % ${inv.basis}` });
        if (inv.marginalBandPctPt > 0) out.push({ value: inv.limitPctVol - inv.marginalBandPctPt, tier: "caution", label: `marginal from ${round(inv.limitPctVol - inv.marginalBandPctPt)} %` });
      } else {
        out.push({ value: 0, tier: "warning", label: "at the O2 limit" });
        if (inv.marginalBandPctPt > 0) out.push({ value: inv.marginalBandPctPt, tier: "caution", label: `marginal below ${round(inv.marginalBandPctPt)} pt` });
      }
    }
  }
  // Rules watching this key: from the current advisories (which name their quantity).
  const rules = new Map();
  for (const a of state.advisories ?? []) {
    if (a.quantity !== key || !Number.isFinite(a.limit)) continue;
    const r = rules.get(a.ruleId) ?? { direction: a.direction, unit: a.unit, tiers: new Map() };
    r.tiers.set(a.tier, a.limit);
    rules.set(a.ruleId, r);
  }
  for (const t of history) {
    const r = rules.get(t.ruleId);
    if (r && Number.isFinite(t.limit) && !r.tiers.has(t.tier)) r.tiers.set(t.tier, t.limit);
  }
  for (const c of configured) {
    if (c.quantity !== key || !c.tiers) continue;
    const r = rules.get(c.id) ?? { direction: c.direction, unit: c.quantityUnit, tiers: new Map() };
    for (const [tier, value] of Object.entries(c.tiers)) if (Number.isFinite(value) && !r.tiers.has(tier)) r.tiers.set(tier, value);
    rules.set(c.id, r);
  }
  for (const [ruleId, r] of rules) {
    for (const [tier, value] of r.tiers) {
      if (out.some((l) => l.value === value && l.tier === tier)) continue;
      out.push({ value, tier, label: `${tier} ${r.direction === "low" ? "below" : "above"} ${round(value)} ${r.unit} (${ruleId})` });
    }
  }
  return out.sort((a, b) => (TIER_RANK[b.tier] ?? 0) - (TIER_RANK[a.tier] ?? 0) || a.value - b.value);
}

const TIER_RANK = { warning: 3, caution: 2, notice: 1 };

function round(v) {
  return Math.abs(v) >= 100 ? String(Math.round(v)) : String(Math.round(v * 10) / 10);
}

/** The transitions drawn on the time line: the moments something was annunciated or went. */
export const MARKED_TRANSITIONS = new Set(["raise", "escalate", "re-alert", "clear"]);

/**
 * Advisory marks within [fromMs, toMs], oldest first: { atMs, tier, advisoryId, transition,
 * hollow (the condition went), title, why, quantity }. Title and quantity come from the current
 * advisories where the advisory is still on screen; else the rule id stands in for the title and
 * the quantity is null (not known: the mark then belongs to every pane).
 */
export function advisoryMarks(history, fromMs, toMs, advisories = []) {
  const byId = new Map(advisories.map((a) => [a.id, a]));
  return history
    .filter((t) => MARKED_TRANSITIONS.has(t.transition) && t.atMs >= fromMs && t.atMs <= toMs)
    .map((t) => ({
      atMs: t.atMs,
      tier: t.tier,
      advisoryId: t.advisoryId,
      transition: t.transition,
      hollow: t.transition === "clear",
      title: byId.get(t.advisoryId)?.title ?? t.ruleId,
      why: t.why,
      quantity: byId.get(t.advisoryId)?.quantity ?? null,
    }))
    .sort((a, b) => a.atMs - b.atMs || (a.advisoryId < b.advisoryId ? -1 : 1));
}

/** Whether a mark is about one of a pane's series (or about an unknown quantity, so possibly). */
export function markBelongs(mark, pane) {
  return mark.quantity === null || pane.series.some((s) => s.key === mark.quantity);
}

/** How many points to ask for: about one per pixel column of the plot, within the API's bounds. */
export function pointsFor(widthPx) {
  return Math.max(100, Math.min(10_000, Math.round(widthPx)));
}

/** Smallest and largest known value of a pane's columns and limits (for its text summary). */
export function extent(columns) {
  let min = Number.POSITIVE_INFINITY;
  let max = Number.NEGATIVE_INFINITY;
  for (const c of columns) {
    for (const v of c) {
      if (v === null || v === undefined || !Number.isFinite(v)) continue;
      if (v < min) min = v;
      if (v > max) max = v;
    }
  }
  return min <= max ? { min, max } : null;
}
