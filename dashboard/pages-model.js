// Pure helpers of the engineer's pages (unit detail, advisory list and history, shift handover,
// audit trail): no DOM, no fetch, so the tests check them directly
// (test/server/pages-model.test.ts). The glance screen's helpers (glance-model.js) are reused
// for words, numbers and commands.

/** The query of the advisory history page: unit, tier and rule filters ("" = all). */
export function parseHistoryFilter(search) {
  const q = new URLSearchParams(search);
  const pick = (name) => (q.get(name) ?? "").trim();
  return { unit: pick("unit"), tier: pick("tier"), rule: pick("rule") };
}

/** The URL query for a filter, leaving out empty parts (stable order: unit, tier, rule). */
export function historyFilterQuery(filter) {
  const q = new URLSearchParams();
  for (const name of ["unit", "tier", "rule"]) if (filter[name]) q.set(name, filter[name]);
  const text = q.toString();
  return text === "" ? "" : `?${text}`;
}

/**
 * Transitions that match the filter. A transition names its rule, not its unit: the unit
 * comes from the configured rules (GET /api/rules) or, failing that, a current advisory.
 */
export function filterHistory(history, filter, rules = [], advisories = []) {
  const unitOf = new Map();
  for (const r of rules) unitOf.set(r.id, r.unitId ?? null);
  for (const a of advisories) if (!unitOf.has(a.ruleId)) unitOf.set(a.ruleId, a.unitId ?? null);
  return history.filter(
    (t) => (!filter.unit || unitOf.get(t.ruleId) === filter.unit) && (!filter.tier || t.tier === filter.tier) && (!filter.rule || t.ruleId === filter.rule),
  );
}

/** The choices the filter offers: the units and rules of the configured rules and of the history, sorted. */
export function historyFacets(history, rules = []) {
  const units = new Set();
  const ruleIds = new Set();
  for (const r of rules) {
    ruleIds.add(r.id);
    if (r.unitId) units.add(r.unitId);
  }
  for (const t of history) ruleIds.add(t.ruleId);
  return { units: [...units].sort(), tiers: ["notice", "caution", "warning"], rules: [...ruleIds].sort() };
}

/** The analysers that serve a unit: those with a signal the unit's O2, H2O or CO reading uses, or named after the unit. */
export function analysersOfUnit(state, unitId) {
  const unit = state.units?.find((u) => u.id === unitId);
  const signals = new Set();
  const inv = unit?.inerting;
  if (inv) {
    for (const s of inv.o2Signals ?? []) signals.add(s);
    if (inv.h2oSignal) signals.add(inv.h2oSignal);
  }
  for (const p of state.coPoints ?? []) if (p.unitId === unitId) signals.add(p.signal);
  return (state.analysers ?? []).filter((a) => a.id.startsWith(`${unitId}-`) || (a.signals ?? []).some((s) => signals.has(s.signal)));
}

/** Everything the unit page shows about one unit, taken from the plant state; null for an unknown unit. */
export function unitDetail(state, unitId) {
  const unit = state.units?.find((u) => u.id === unitId);
  if (!unit) return null;
  const dewPoints = (state.dewPoints ?? []).filter((d) => d.unitId === unitId);
  const sourceIds = new Set(dewPoints.map((d) => d.moistureSourceId));
  const acidDewPoints = (state.acidDewPoints ?? []).filter((d) => d.unitId === unitId);
  for (const d of acidDewPoints) sourceIds.add(d.moistureSourceId);
  return {
    unit,
    phase: (state.phases ?? []).find((p) => p.unitId === unitId) ?? null,
    inerting: unit.inerting ?? null,
    analysers: analysersOfUnit(state, unitId),
    dewPoints,
    acidDewPoints,
    moistureSources: (state.moistureSources ?? []).filter((m) => sourceIds.has(m.id)),
    coPoints: (state.coPoints ?? []).filter((p) => p.unitId === unitId),
    advisories: (state.advisories ?? []).filter((a) => a.unitId === unitId),
  };
}

/**
 * Purge progress as rows of [label, text]: volume changes (counted and needed), predicted against
 * measured O2, time to the target. Numbers are formatted by `fmt(value, digits)`.
 */
export function purgeRows(purge, fmt) {
  if (!purge) return [];
  const pct = (v) => (v === null || v === undefined ? "\u2014" : `${fmt(v, 2)} % vol ${purge.basis}`);
  const rows = [
    ["status", purge.status],
    ["inert gas flow", purge.inertFlowNm3PerH === null ? "\u2014" : `${fmt(purge.inertFlowNm3PerH, 0)} Nm\u00b3/h (${purge.flowOn ? "on" : "off"}, on from ${fmt(purge.flowOnNm3PerH, 0)})`],
    ["volume", `${fmt(purge.volumeM3, 0)} m\u00b3`],
    ["volume changes", purge.volumeChanges === null ? "\u2014" : `${fmt(purge.volumeChanges, 2)}${purge.volumeChangesToTarget === null ? "" : ` of ${fmt(purge.volumeChangesToTarget, 2)} to the target`}`],
    ["O2 at start", pct(purge.startO2PctVol)],
    ["O2 predicted (well mixed)", pct(purge.predictedO2PctVol)],
    ["O2 measured", pct(purge.measuredO2PctVol)],
    ["target", pct(purge.targetO2PctVol)],
    ["time to target (fitted)", purge.fittedTimeToTargetS === null ? "\u2014" : durationText(purge.fittedTimeToTargetS * 1000)],
  ];
  return rows;
}

/** "0 min", "45 min", "3 h 05 min", "2 d 4 h": a duration within a shift report. */
export function durationText(ms) {
  if (!Number.isFinite(ms) || ms < 0) return "\u2014";
  const min = Math.round(ms / 60_000);
  if (min < 60) return `${min} min`;
  const h = Math.floor(min / 60);
  if (h < 48) return min % 60 === 0 ? `${h} h` : `${h} h ${String(min % 60).padStart(2, "0")} min`;
  return `${Math.floor(h / 24)} d ${h % 24} h`;
}

/** Share of a span in percent, one decimal ("37.5 %"). */
export function shareText(ms, spanMs) {
  if (!(spanMs > 0)) return "\u2014";
  return `${(Math.round((ms / spanMs) * 1000) / 10).toFixed(1)} %`;
}

/** Handover hours from the page's query: 8 (default) or 12. */
export function parseHandoverHours(search) {
  return new URLSearchParams(search).get("hours") === "12" ? 12 : 8;
}

/** What a handover action says: "acknowledged by t.operator at 22:16 (filter hopper checked)". */
export const ACTION_WORDS = {
  ack: "acknowledged",
  reset: "reset",
  shelve: "shelved",
  unshelve: "unshelved",
  "out-of-service": "taken out of service",
  "return-to-service": "returned to service",
};

export function actionText(action, whenText) {
  const word = ACTION_WORDS[action.kind] ?? action.kind;
  return `${word} by ${action.by} at ${whenText}${action.why ? ` (${action.why})` : ""}`;
}

/** Whether a session may read the audit log (the server's AUDIT_ROLE: engineer, admin). */
export function mayReadAudit(session) {
  return Boolean(session && session.user && (session.role === "engineer" || session.role === "admin"));
}

/** An audit entry's detail as "key: value" pairs in a stable order (the server never puts a secret there). */
export function auditDetailText(detail) {
  if (!detail || typeof detail !== "object") return "";
  return Object.keys(detail)
    .sort()
    .map((k) => `${k}: ${typeof detail[k] === "object" ? JSON.stringify(detail[k]) : String(detail[k])}`)
    .join("; ");
}

/**
 * The commands the advisory page offers for an advisory: the glance screen's (ack, reset,
 * shelve, unshelve) and the engineer's out of service and return to service.
 */
export function pageActions(advisory, glanceActions) {
  const out = [...glanceActions];
  if (advisory.state === "out-of-service") out.push("return-to-service");
  else out.push("out-of-service");
  return out;
}

/** The body of an out-of-service command (a reason is required, at most 500 characters), else null for the glance screen's commandBody. */
export function outOfServiceBody(kind, reason) {
  if (kind !== "out-of-service") return null;
  const why = String(reason ?? "").trim();
  if (why === "") return { error: "A reason is needed to take an advisory out of service: it is kept in the record." };
  if ([...why].length > 500) return { error: "The reason is longer than 500 characters." };
  return { body: { reason: why } };
}
