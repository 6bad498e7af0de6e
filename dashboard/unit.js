// The unit detail page (unit.html?unit=ID): everything millwarden computes about one unit, read
// from GET /api/state every few seconds: inerting and its O2 readings, vote and limits with
// their origins, purge progress, the unit's analysers and their health, dew point and acid dew
// point with what each is computed from, and the unit's CO points. Read-only.
import { el } from "./dom.js";
import { INERTING_WORDS, PHASE_WORDS, formatNumber, formatSigned, formatWhen } from "./glance-model.js";
import { durationText, purgeRows, unitDetail } from "./pages-model.js";
import { $, facts, getJSON, initPage, showPlantHead, showProblem, table, tierBadge } from "./pages.js";

const REFRESH_MS = 5000;
const unitId = new URLSearchParams(window.location.search).get("unit") ?? "";
const num = (v, d) => formatNumber(v, d);
const orDash = (t) => (t === null || t === undefined || t === "" ? "\u2014" : String(t));
const timeTo = (s) => (s === null ? "\u2014" : Number.isFinite(s) ? durationText(s * 1000) : "not approaching");

/** Sections with wide tables take the page's whole width. */
const WIDE = new Set(["h-o2", "h-analysers", "h-dew", "h-co"]);

function section(id, title, ...children) {
  return el("section", { class: WIDE.has(id) ? "panel panel-wide" : "panel", "aria-labelledby": id }, el("h2", { id, text: title }), ...children);
}

/** One location or source: a heading and its facts, side by side with the others on a wide screen. */
function block(title, rows) {
  return el("div", { class: "block" }, el("h3", { text: title }), facts(rows));
}

function comparisonText(c) {
  if (c.status !== "ok") return `${c.name}: ${c.reason || "unknown"}`;
  return `${c.name} (${c.kind ?? "?"}): H2O ${num(c.h2oPctVol, 2)} % vol (${formatSigned(c.h2oDifferencePctVol, 2)} pt), dew point ${num(c.dewPointC, 1)} \u00b0C (${formatSigned(c.dewPointDifferenceK, 1)} K)`;
}

function inertingSection(inv, nowMs) {
  if (!inv) return section("h-o2", "Inerting and O2", el("p", { class: "none", text: "No O2 watch is configured for this unit." }));
  const readings = table(
    "O2 readings",
    ["analyser signal", "% vol", "trusted", "used", "why"],
    inv.readings.map((r) => [r.id, num(r.pctVol, 2), r.trusted ? "yes" : el("span", { class: "state-bad", text: "no" }), r.used ? "yes" : "no", orDash(r.reason)]),
    [1],
  );
  const vote = inv.vote
    ? facts([
        ["vote", `${inv.vote.mode}, disagreement limit ${num(inv.vote.disagreeLimitPctPt, 1)} %-pt`],
        ["disagreement", inv.vote.disagreement ? el("span", { class: "state-bad", text: "yes" }) : "no"],
        ["degraded", inv.vote.degraded ? el("span", { class: "state-bad", text: "yes: fewer trusted readings than analysers" }) : "no"],
        ["used", inv.vote.used.join(", ") || "\u2014"],
        ["why", orDash(inv.vote.reason)],
      ])
    : el("p", { class: "note", text: "One O2 reading: no vote." });
  const limits = table(
    "O2 limits: the governing one decides the state",
    ["limit", "value", "O2 on its basis", "margin %-pt", "trend %-pt/min", "time to limit", "origin"],
    inv.limits.map((l) => [
      l.governing ? el("strong", { text: `${l.id} (governing)` }) : l.id,
      `${num(l.pctVol, 1)} % ${l.basis}`,
      num(l.o2PctVol, 2),
      formatSigned(l.marginPctPt, 2),
      formatSigned(l.trendPctPtPerMin, 3),
      timeTo(l.timeToLimitS),
      l.origin,
    ]),
    [1, 2, 3, 4, 5],
  );
  const tier = { marginal: "caution", purging: "caution", "not-inert": "warning" }[inv.state];
  return section(
    "h-o2",
    "Inerting and O2",
    facts([
      ["state", tier ? el("span", {}, tierBadge(tier), ` ${INERTING_WORDS[inv.state] ?? inv.state}`) : (INERTING_WORDS[inv.state] ?? inv.state)],
      ["O2", `${num(inv.o2PctVol, 2)} % vol ${inv.basis} (reading ${num(inv.readingPctVol, 2)} % ${inv.readingBasis}${inv.h2oPctVol !== null ? `, H2O ${num(inv.h2oPctVol, 1)} % from ${inv.h2oSignal}` : ""})`],
      ["limit", `${num(inv.limitPctVol, 1)} % ${inv.basis}: ${inv.limitSource}`],
      ["margin", `${formatSigned(inv.marginPctPt, 2)} %-pt (marginal within ${num(inv.marginalBandPctPt, 1)} %-pt)`],
      ["trend", `${formatSigned(inv.trendPctPtPerMin, 3)} %-pt/min over ${inv.trendWindowS} s; ${inv.trendReason}`],
      ["why", inv.reason],
    ]),
    el("h3", { text: "Readings and vote" }),
    readings,
    vote,
    el("h3", { text: "Limits and their origins" }),
    limits,
    el("p", { class: "note", text: `as of ${formatWhen(nowMs, nowMs)}` }),
  );
}

function purgeSection(inv) {
  const purge = inv?.purge ?? null;
  if (!purge) return section("h-purge", "Purge progress", el("p", { class: "none", text: "No purge tracking is configured for this unit." }));
  return section("h-purge", "Purge progress", facts(purgeRows(purge, num)), el("p", { class: "note", text: purge.reason }));
}

function analyserSection(analysers, nowMs) {
  if (analysers.length === 0) return section("h-analysers", "Analyser health", el("p", { class: "none", text: "No analyser of this unit is configured." }));
  return section(
    "h-analysers",
    "Analyser health",
    table(
      "Per analyser (NE 107 status words): a signal of an analyser that is not ok is not trusted",
      ["analyser", "state", "since", "reasons", "signals"],
      analysers.map((a) => [
        `${a.name} (${a.id})`,
        a.state === "ok" ? "ok" : el("span", { class: "state-bad", text: a.state }),
        a.sinceMs === null ? "\u2014" : formatWhen(a.sinceMs, nowMs),
        a.reasons.length ? a.reasons.join("; ") : "\u2014",
        a.signals.map((s) => `${s.signal} (${s.role}): ${s.state}${s.reasons.length ? `, ${s.reasons.join("; ")}` : ""}`).join(" \u00b7 "),
      ]),
    ),
  );
}

function dewSection(d) {
  const children = [];
  for (const p of d.dewPoints) {
    children.push(
      block(p.name, [
        ["gas temperature", `${num(p.gasTempC, 1)} \u00b0C`],
        ["H2O", `${num(p.h2oPctVol, 2)} % vol wet`],
        ["moisture source", `${orDash(p.moistureSourceName)} (${orDash(p.moistureSourceKind)}, ${orDash(p.moistureSourceId)})`],
        ["pressure", `${num(p.gaugePressurePa, 0)} Pa gauge, ${num(p.absPressurePa, 0)} Pa absolute`],
        ["dew point", `${num(p.dewPointC, 1)} \u00b0C`],
        ["margin", `${num(p.marginK, 1)} K; trend ${formatSigned(p.marginTrendKPerMin, 3)} K/min; to condensation ${timeTo(p.timeToCondensationS)}`],
        ["how", `${orDash(p.reason)}${p.dewPointReason ? `; ${p.dewPointReason}` : ""}`],
        ["comparison", p.comparisons.length ? p.comparisons.map(comparisonText).join("; ") : orDash(p.disagreementReason)],
      ]),
    );
  }
  for (const m of d.moistureSources) {
    const parts = [
      ["H2O", `${num(m.h2oPctVol, 2)} % vol (${m.status})`],
      ["kind", m.kind],
      ["why", orDash(m.reason)],
    ];
    if (m.relativeHumidityPct !== null) parts.push(["humidity sensor", `${num(m.relativeHumidityPct, 1)} % RH at ${num(m.sensorTempC, 1)} \u00b0C, ${num(m.sensorAbsPressurePa, 0)} Pa absolute`]);
    if (m.coalFeedTPerH !== null) parts.push(["moisture balance", `coal ${num(m.coalFeedTPerH, 1)} t/h, ${num(m.rawMoisturePctMass, 1)} % to ${num(m.productMoisturePctMass, 1)} % moisture, ${num(m.evaporatedWaterKgPerH, 0)} kg/h evaporated into ${num(m.gasFlowNm3PerH, 0)} Nm\u00b3/h`]);
    children.push(block(`Moisture source: ${m.name}`, parts));
  }
  for (const a of d.acidDewPoints) {
    children.push(
      block(`Acid dew point: ${a.name}`, [
        ["correlation", a.methodName],
        ["SO3", `${num(a.so3Ppm, 1)} ppm (${a.so3From}${a.so2Ppm !== null ? `, SO2 ${num(a.so2Ppm, 0)} ppm` : ""})`],
        ["H2O", `${num(a.h2oPctVol, 2)} % vol from ${a.moistureSourceId}`],
        ["pressure", `${num(a.absPressurePa, 0)} Pa absolute`],
        ["acid dew point", `${num(a.acidDewPointC, 1)} \u00b0C`],
        ["coldest surface", `${num(a.coldestTempC, 1)} \u00b0C (${orDash(a.coldestSignalId)})`],
        ["margin", `${num(a.marginK, 1)} K`],
        ["why", `${orDash(a.reason)}${a.acidDewPointReason ? `; ${a.acidDewPointReason}` : ""}`],
      ]),
    );
  }
  if (children.length === 0) return section("h-dew", "Dew point and acid dew point", el("p", { class: "none", text: "No dew point location of this unit is configured." }));
  return section("h-dew", "Dew point and acid dew point", el("div", { class: "blocks" }, ...children));
}

function coSection(points) {
  if (points.length === 0) return section("h-co", "CO", el("p", { class: "none", text: "No CO point of this unit is configured." }));
  return section(
    "h-co",
    "CO",
    table(
      "Gradients in ppm/min: Theil\u2013Sen and least squares over the short window, Theil\u2013Sen over the long one",
      ["point", "CO ppm", "gradient", "least squares", "long window", "baseline ppm", "above baseline", "why"],
      points.map((p) => [
        `${p.name} (${p.signal})`,
        num(p.coPpm, 1),
        formatSigned(p.gradientPpmPerMin, 2),
        formatSigned(p.gradientLsPpmPerMin, 2),
        formatSigned(p.gradientLongPpmPerMin, 2),
        num(p.baseline?.ppm ?? null, 1),
        formatSigned(p.baseline?.riseAbovePpm ?? null, 1),
        `${p.reason}${p.baseline ? `; baseline: ${p.baseline.reason}${p.baseline.phaseNote ? ` (${p.baseline.phaseNote})` : ""}` : ""}`,
      ]),
      [1, 2, 3, 4, 5, 6],
    ),
  );
}

function headSection(d, nowMs) {
  const ph = d.phase;
  return section(
    "h-unit",
    d.unit.name,
    facts([
      ["unit", `${d.unit.id} (${d.unit.kind})`],
      ["phase", ph ? `${PHASE_WORDS[ph.phase] ?? ph.phase} since ${formatWhen(ph.sinceMs, nowMs)}: ${ph.reason}` : "no phase watch configured"],
      [
        "advisories",
        d.advisories.length
          ? el("span", {}, ...d.advisories.flatMap((a) => [tierBadge(a.tier), ` ${a.title} (${a.state}) `]), el("a", { href: `advisories.html?unit=${encodeURIComponent(d.unit.id)}`, text: "details" }))
          : "none active",
      ],
      ["trends", el("a", { href: `trends.html`, text: "open the trends page" })],
    ]),
  );
}

let timer = null;

async function render() {
  clearTimeout(timer);
  try {
    const state = await getJSON("/api/state");
    showPlantHead(state);
    const d = unitDetail(state, unitId);
    if (d === null) {
      showProblem(unitId ? `No unit "${unitId}" in this plant: choose one below.` : "No unit chosen: choose one below.");
      $("main").replaceChildren(
        section("h-units", "Units", el("ul", {}, ...state.units.map((u) => el("li", {}, el("a", { href: `unit.html?unit=${encodeURIComponent(u.id)}`, text: `${u.name} (${u.id})` })))))
      );
      return;
    }
    showProblem(null);
    document.title = `millwarden \u00b7 ${d.unit.name}`;
    $("page-title").textContent = d.unit.name;
    $("main").replaceChildren(headSection(d, state.nowMs), purgeSection(d.inerting), inertingSection(d.inerting, state.nowMs), analyserSection(d.analysers, state.nowMs), dewSection(d), coSection(d.coPoints));
    document.body.dataset.rendered = "true";
  } catch (err) {
    showProblem(`Could not load the plant state: ${err instanceof Error ? err.message : String(err)}`);
  } finally {
    timer = setTimeout(() => void render(), REFRESH_MS);
  }
}

void initPage({ title: "Unit detail", current: "unit.html" }, render);
