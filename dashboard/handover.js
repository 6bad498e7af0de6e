// The shift handover page (handover.html?hours=8|12): GET /api/handover, laid out to be read on
// screen or printed to PDF from the browser (pages.css has the print stylesheet: black on white,
// no navigation, one section per page).
import { el } from "./dom.js";
import { INERTING_WORDS, PHASE_WORDS, formatDateTime, formatNumber, formatSigned } from "./glance-model.js";
import { actionText, durationText, parseHandoverHours, shareText } from "./pages-model.js";
import { $, getJSON, initPage, showPlantHead, showProblem, table, tierBadge } from "./pages.js";

let hours = parseHandoverHours(window.location.search);

function section(id, title, ...children) {
  return el("section", { class: "panel panel-wide", "aria-labelledby": id }, el("h2", { id, text: title }), ...children);
}

const when = (ms) => (ms === null ? "\u2014" : formatDateTime(ms));

function controls() {
  const buttons = [8, 12].map((h) => {
    const b = el("button", { type: "button", class: "btn", "aria-pressed": String(h === hours), text: `last ${h} h` });
    b.addEventListener("click", () => {
      hours = h;
      window.history.replaceState(null, "", `handover.html?hours=${h}`);
      void render();
    });
    return b;
  });
  const print = el("button", { type: "button", class: "btn", text: "Print or save as PDF" });
  print.addEventListener("click", () => window.print());
  return el("div", { class: "filters no-print", role: "group", "aria-label": "shift length" }, ...buttons, print);
}

function statesTable(caption, list, words, spanMs) {
  if (list.length === 0) return el("p", { class: "none", text: "No state on record." });
  const rows = [];
  for (const s of list) {
    for (const t of s.times) rows.push([s.unitId, t.value === null ? "cannot be told" : (words[t.value] ?? t.value), durationText(t.ms), shareText(t.ms, spanMs)]);
    if (s.unrecordedMs > 0) rows.push([s.unitId, "not on record", durationText(s.unrecordedMs), shareText(s.unrecordedMs, spanMs)]);
  }
  return table(caption, ["unit", "state", "time", "share"], rows, [2, 3]);
}

function extremesTable(caption, list, digits, unit, signed = false) {
  if (list.length === 0) return el("p", { class: "none", text: "None configured." });
  return table(
    caption,
    ["where", "unit", unit, "at", "points"],
    list.map((e) => [`${e.name} (${e.id})`, e.unitId ?? "plant", e.value === null ? "no data" : signed ? formatSigned(e.value, digits) : formatNumber(e.value, digits), when(e.atMs), String(e.points)]),
    [2, 4],
  );
}

async function render() {
  try {
    const [state, h] = await Promise.all([getJSON("/api/state"), getJSON(`/api/handover?hours=${hours}`)]);
    showPlantHead(state);
    showProblem(null);
    const spanMs = h.toMs - h.fromMs;
    const head = section(
      "h-span",
      `Shift handover: the last ${h.hours} h of data time`,
      controls(),
      el("p", {}, `From ${formatDateTime(h.fromMs)} to ${formatDateTime(h.toMs)} (data time${state.site ? `, ${state.site.name} \u00b7 ${state.site.plant}` : ""}).`),
      el("p", { class: "note", text: h.advisoryOnly }),
    );
    const advisories = section(
      "h-adv",
      `Advisories raised and their handling (${h.advisories.length})`,
      h.advisories.length === 0
        ? el("p", { class: "none", text: "No advisory was raised or handled in this span." })
        : table(
            "Highest tier first; handling by the people who gave the commands",
            ["advisory", "highest tier", "raises", "first raised", "farthest past its limit: value (limit)", "handling", "state at the end"],
            h.advisories.map((a) => [
              a.advisoryId,
              tierBadge(a.highestTier),
              String(a.raises),
              when(a.firstRaiseMs),
              a.worstValue === null ? "\u2014" : `${formatNumber(a.worstValue, 2)} (${formatNumber(a.worstLimit, 2)})`,
              a.actions.length ? el("ul", {}, ...a.actions.map((x) => el("li", { text: actionText(x, formatDateTime(x.atMs)) }))) : el("span", { class: "state-bad", text: "not handled" }),
              a.stateAtEnd,
            ]),
            [2],
          ),
    );
    const margins = section(
      "h-margins",
      "Peaks and lowest margins",
      el("h3", { text: "Peak CO gradient per point" }),
      extremesTable("Highest Theil\u2013Sen gradient over the short window", h.coGradientPeaks, 2, "ppm/min", true),
      el("h3", { text: "Lowest dew point margin per location" }),
      extremesTable("Gas temperature minus water dew point", h.dewPointMarginLows, 1, "K"),
      el("h3", { text: "Lowest O2 margin per unit" }),
      extremesTable("Governing limit minus O2 on its basis", h.o2MarginLows, 2, "%-pt"),
    );
    const states = section(
      "h-states",
      "Time in each phase and inerting state",
      el("h3", { text: "Operating phase" }),
      statesTable("Per unit, longest first", h.phases, PHASE_WORDS, spanMs),
      el("h3", { text: "Inerting state" }),
      statesTable("Per unit, longest first", h.inerting, INERTING_WORDS, spanMs),
    );
    const outages = section(
      "h-outages",
      `Analyser outages (${h.analyserOutages.length})`,
      h.analyserOutages.length === 0
        ? el("p", { class: "none", text: "Every analyser was ok throughout." })
        : table(
            "Each stretch in a state other than ok; time counted within the span",
            ["analyser", "state", "from", "until", "time"],
            h.analyserOutages.map((o) => [o.analyserId, o.value ?? "cannot be told", formatDateTime(o.startMs), o.endMs === null ? "still out" : formatDateTime(o.endMs), durationText(o.durationMs)]),
            [4],
          ),
    );
    $("main").replaceChildren(head, advisories, margins, states, outages);
    document.body.dataset.rendered = "true";
  } catch (err) {
    showProblem(`Could not load the handover: ${err instanceof Error ? err.message : String(err)}`);
  }
}

void initPage({ title: "Shift handover", current: "handover.html" }, render);
