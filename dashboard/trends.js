// The trends page: the engineer's view of history. It only reads (GET /api/state,
// /api/advisories, /api/trend); nothing here can change anything in the daemon.
//
//   GET /api/state ──▶ seriesCatalog ──▶ picker, URL (?range&series&from&to)
//   GET /api/trend ×N ──▶ trendColumns ──▶ one uPlot per engineering unit, one shared time axis
//   GET /api/advisories ──▶ advisoryMarks (time line) + limitsFor (threshold lines)
//
// All text goes in through textContent. Times are the data's own (state.nowMs).
import uPlot from "./vendor/uplot/uPlot.esm.js";
import { formatAge, formatDateTime, formatNumber } from "./glance-model.js";
import { el, svg } from "./dom.js";
import {
  PENS,
  RANGES,
  advisoryMarks,
  buildQuery,
  extent,
  limitsFor,
  markBelongs,
  panesFor,
  parseQuery,
  pointsFor,
  seriesCatalog,
  timeWindow,
  trendColumns,
  MAX_SERIES,
} from "./trends-model.js";

/** While the newest data is in view, the plots follow it (browser clock; the data's own time decides what is shown). */
const REFRESH_MS = 15_000;
const HISTORY_LIMIT = 1000;
const TIER_COLOURS = { warning: "#b5121b", caution: "#f0b000", notice: "#2a4fa8" };
const INK = "#17191b";

const $ = (id) => /** @type {HTMLElement} */ (document.getElementById(id));

let state = null;
let catalog = [];
/** { range, series, zoom } */
let page = null;
let plots = [];
let refreshTimer = null;
let loading = 0;
/** The configured rules (GET /api/rules): every tier's limit is drawn, raised or not. */
let configuredRules = [];


// The same shapes as the glance screen: circle, triangle, diamond; hollow once the condition went.
const SHAPES = {
  notice: (fill) => svg("circle", { cx: 10, cy: 10, r: 8, fill, stroke: INK, "stroke-width": 1.5 }),
  caution: (fill) => svg("polygon", { points: "10,1.5 19,18 1,18", fill, stroke: INK, "stroke-width": 1.5 }),
  warning: (fill) => svg("polygon", { points: "10,1 19,10 10,19 1,10", fill, stroke: INK, "stroke-width": 1.5 }),
};

function tierShape(tier, hollow) {
  const make = SHAPES[tier] ?? SHAPES.notice;
  return svg("svg", { class: "shape", viewBox: "0 0 20 20", "aria-hidden": "true" }, make(hollow ? "#ffffff" : TIER_COLOURS[tier] ?? INK));
}

function penSwatch(pen) {
  return svg(
    "svg",
    { class: "swatch", viewBox: "0 0 40 10", "aria-hidden": "true" },
    svg("line", { x1: 0, y1: 5, x2: 40, y2: 5, stroke: pen.stroke, "stroke-width": 2.5, "stroke-dasharray": pen.dash.length ? pen.dash.join(" ") : null }),
  );
}

async function getJSON(path) {
  const response = await fetch(path, { cache: "no-store" });
  const body = await response.json().catch(() => null);
  if (!response.ok) throw new Error(body?.message ?? `${path}: HTTP ${response.status}`);
  return body;
}

function showProblem(text) {
  const p = $("problem");
  p.hidden = text === null;
  p.textContent = text ?? "";
}

// ---- controls ----

function renderRanges() {
  $("ranges").replaceChildren(
    ...RANGES.map((r) => {
      const b = el("button", { type: "button", class: "btn range", "aria-pressed": String(page.range === r.id && page.zoom === null), text: r.label });
      b.addEventListener("click", () => navigate({ range: r.id, zoom: null }));
      return b;
    }),
  );
  $("zoom-reset").hidden = page.zoom === null;
}

function renderPicker() {
  const groups = new Map();
  for (const s of catalog) {
    if (!groups.has(s.group)) groups.set(s.group, []);
    groups.get(s.group).push(s);
  }
  const chosen = new Set(page.series);
  let n = 0;
  $("picker-groups").replaceChildren(
    ...[...groups].map(([group, list]) =>
      el(
        "fieldset",
        { class: "group" },
        el("legend", { text: group }),
        ...list.map((s) => {
          n += 1;
          const id = `pick-${n}`;
          const box = el("input", { type: "checkbox", id, value: s.key, checked: chosen.has(s.key) });
          box.addEventListener("change", () => {
            const next = box.checked ? [...page.series, s.key] : page.series.filter((k) => k !== s.key);
            if (next.length > MAX_SERIES) {
              box.checked = false;
              showProblem(`At most ${MAX_SERIES} series at once: take one off first.`);
              return;
            }
            showProblem(null);
            navigate({ series: next });
          });
          return el("div", { class: "pick" }, box, el("label", { for: id }, `${s.label} `, el("span", { class: "unit-sym", text: `(${s.unit})` })));
        }),
      ),
    ),
  );
  $("picker-count").textContent = `· ${page.series.length} of ${catalog.length} shown`;
}

/** Change the page state, keep it in the URL (so a view can be shared and survives a reload), redraw. */
function navigate(changes) {
  page = { ...page, ...changes };
  history.replaceState(null, "", buildQuery(page));
  renderRanges();
  renderPicker();
  void refresh();
}

function currentWindow() {
  return timeWindow(page.range, page.zoom, state.nowMs);
}

function zoomBy(factor) {
  const w = currentWindow();
  const mid = (w.fromMs + w.toMs) / 2;
  const half = ((w.toMs - w.fromMs) * factor) / 2;
  navigate({ zoom: { fromMs: mid - half, toMs: Math.min(state.nowMs, mid + half) } });
}

function pan(direction) {
  const w = currentWindow();
  const step = ((w.toMs - w.fromMs) / 2) * direction;
  if (direction > 0 && w.toMs >= state.nowMs) return;
  const toMs = Math.min(state.nowMs, w.toMs + step);
  navigate({ zoom: { fromMs: toMs - (w.toMs - w.fromMs), toMs } });
}

// ---- plots ----

/** Draw the limits of a pane (tier colour, dashed, with its words) and the advisory marks. */
function drawOverlay(u, pane, marks) {
  const ctx = u.ctx;
  const { left, top, width, height } = u.bbox;
  const px = devicePixelRatio || 1;
  ctx.save();
  ctx.font = `${Math.round(12 * px)}px system-ui, "DejaVu Sans", sans-serif`;
  // Marks first: the limits' words are written over them. A mark about another pane's series is
  // only a thin grey line here (the time is shared, the tier is not this pane's).
  for (const m of marks) {
    const x = Math.round(u.valToPos(m.atMs, "x", true));
    if (x < left || x > left + width) continue;
    if (!markBelongs(m, pane)) {
      ctx.setLineDash([2 * px, 4 * px]);
      ctx.lineWidth = 1 * px;
      ctx.strokeStyle = "#8d9195";
      ctx.beginPath();
      ctx.moveTo(x, top);
      ctx.lineTo(x, top + height);
      ctx.stroke();
      ctx.setLineDash([]);
      continue;
    }
    const colour = TIER_COLOURS[m.tier] ?? INK;
    ctx.setLineDash(m.hollow ? [3 * px, 3 * px] : []);
    ctx.lineWidth = 1.5 * px;
    ctx.strokeStyle = m.hollow ? INK : colour;
    ctx.beginPath();
    ctx.moveTo(x, top);
    ctx.lineTo(x, top + height);
    ctx.stroke();
    ctx.setLineDash([]);
    drawShape(ctx, m.tier, x, top + 8 * px, 7 * px, m.hollow ? "#ffffff" : colour);
  }
  ctx.textBaseline = "bottom";
  // uPlot leaves its axis text settings on the context.
  ctx.textAlign = "left";
  const labelH = 15 * px;
  let lastLabelY = Number.NEGATIVE_INFINITY;
  // Top to bottom, so labels of limits close together are moved apart instead of overprinted.
  const placed = pane.limits
    .map((limit) => ({ limit, y: Math.round(u.valToPos(limit.value, "y", true)) }))
    .filter((p) => p.y >= top && p.y <= top + height)
    .sort((a, b) => a.y - b.y);
  for (const { limit, y } of placed) {
    const colour = TIER_COLOURS[limit.tier] ?? INK;
    ctx.setLineDash([8 * px, 4 * px]);
    ctx.beginPath();
    ctx.moveTo(left, y);
    ctx.lineTo(left + width, y);
    if (limit.tier === "caution") {
      // The light caution colour rides on an ink line, so it stands out on white.
      ctx.lineWidth = 4 * px;
      ctx.strokeStyle = INK;
      ctx.stroke();
    }
    ctx.lineWidth = 2 * px;
    ctx.strokeStyle = colour;
    ctx.stroke();
    ctx.setLineDash([]);
    const text = limit.label;
    const tw = ctx.measureText(text).width;
    const labelY = Math.max(y - 2 * px, lastLabelY + labelH, top + labelH);
    lastLabelY = labelY;
    // At the left, the oldest end: the newest data, at the right, stays in view.
    ctx.fillStyle = "#ffffff";
    ctx.fillRect(left + 4 * px, labelY - labelH + 1 * px, tw + 6 * px, labelH);
    ctx.fillStyle = INK;
    ctx.fillText(text, left + 7 * px, labelY);
  }
  ctx.restore();
}

function drawShape(ctx, tier, x, y, r, fill) {
  ctx.beginPath();
  if (tier === "warning") {
    ctx.moveTo(x, y - r);
    ctx.lineTo(x + r, y);
    ctx.lineTo(x, y + r);
    ctx.lineTo(x - r, y);
  } else if (tier === "caution") {
    ctx.moveTo(x, y - r);
    ctx.lineTo(x + r, y + r * 0.85);
    ctx.lineTo(x - r, y + r * 0.85);
  } else {
    ctx.arc(x, y, r * 0.85, 0, 2 * Math.PI);
  }
  ctx.closePath();
  ctx.fillStyle = fill;
  ctx.fill();
  ctx.lineWidth = 1.5 * (devicePixelRatio || 1);
  ctx.strokeStyle = INK;
  ctx.stroke();
}

function paneHeight(count) {
  const available = window.innerHeight - 260;
  return Math.max(170, Math.min(340, Math.floor(available / Math.max(1, count)) - 60));
}

function buildPane(pane, index, count, win, marks) {
  const isLast = index === count - 1;
  const tables = pane.results.map((r) => (r.columns ? [r.columns.t, r.columns.v, r.columns.lo, r.columns.hi] : [[], [], [], []]));
  const data = uPlot.join(tables.map((t) => [t[0], t[1], t[2], t[3]]));
  const series = [{}];
  const bands = [];
  pane.results.forEach((r, i) => {
    const pen = PENS[i % PENS.length];
    const base = series.length;
    series.push({ label: r.series.label, stroke: pen.stroke, dash: pen.dash, width: 2, spanGaps: false, points: { show: false } });
    // The band a downsampled point stands for (its min and max), faint, so a spike between points still shows.
    series.push({ label: `${r.series.label} min`, stroke: "transparent", width: 0, points: { show: false } });
    series.push({ label: `${r.series.label} max`, stroke: "transparent", width: 0, points: { show: false } });
    if (r.columns?.banded) bands.push({ series: [base + 2, base + 1], fill: `${pen.stroke}22` });
  });
  const values = [];
  pane.results.forEach((r) => {
    if (r.columns) values.push(r.columns.v, r.columns.lo, r.columns.hi);
  });
  const range = extent([...values, pane.limits.map((l) => l.value)]);
  const width = Math.max(280, $("plots").clientWidth - 8);
  const opts = {
    width,
    height: paneHeight(count),
    ms: 1,
    series,
    bands,
    legend: { show: false },
    cursor: { sync: { key: "millwarden-trends" }, drag: { x: true, y: false, setScale: false }, points: { show: false } },
    scales: {
      x: { time: true, min: win.fromMs, max: win.toMs },
      y: {
        range: () => {
          if (range === null) return [0, 1];
          const span = range.max - range.min || Math.abs(range.max) || 1;
          return [range.min - span * 0.08, range.max + span * 0.12];
        },
      },
    },
    axes: [
      {
        stroke: INK,
        grid: { stroke: "#d4d7d9", width: 1 },
        ticks: { stroke: "#a6a9ab" },
        font: '13px system-ui, "DejaVu Sans", sans-serif',
        // One time axis for all panes: its labels under the last one only; 24-hour clock.
        ...(isLast ? { values: (_u, splits) => timeLabels(splits), size: 48 } : { values: (_u, splits) => splits.map(() => ""), size: 8 }),
      },
      // The unit is the pane's heading; a narrow screen keeps its width for the data.
      { stroke: INK, grid: { stroke: "#d4d7d9", width: 1 }, ticks: { stroke: "#a6a9ab" }, font: '13px system-ui, "DejaVu Sans", sans-serif', size: width < 600 ? 44 : 60 },
    ],
    hooks: {
      draw: [(u) => drawOverlay(u, pane, marks)],
      setSelect: [
        (u) => {
          if (u.select.width < 6) return;
          const fromMs = u.posToVal(u.select.left, "x");
          const toMs = u.posToVal(u.select.left + u.select.width, "x");
          u.setSelect({ left: 0, top: 0, width: 0, height: 0 }, false);
          navigate({ zoom: { fromMs, toMs } });
        },
      ],
      setCursor: [(u) => showReadout(u, pane)],
    },
  };
  const box = el("div", { class: "plot" });
  const section = el("section", { class: "pane", "aria-label": paneSummary(pane, range, win) });
  section.append(legendFor(pane), box);
  $("plots").append(section);
  const plot = new uPlot(opts, data, box);
  // The canvas itself says nothing to a screen reader: the pane's label above does.
  plot.root.setAttribute("aria-hidden", "true");
  return plot;
}

/** Tick labels on the time axis: hh:mm, with the date under the first tick of each day. */
function timeLabels(splits) {
  let lastDay = "";
  return splits.map((t) => {
    const full = formatDateTime(t);
    const day = full.slice(0, 10);
    const clock = full.slice(11, 16);
    const label = day === lastDay ? clock : `${clock}\n${day}`;
    lastDay = day;
    return label;
  });
}

function paneSummary(pane, range, win) {
  const names = pane.results.map((r) => r.series.label).join(", ");
  const span = `${formatDateTime(win.fromMs)} to ${formatDateTime(win.toMs)}`;
  const values = range === null ? "no data" : `from ${formatNumber(range.min, 1)} to ${formatNumber(range.max, 1)} ${pane.unit}`;
  const limits = pane.limits.length ? `; limits ${pane.limits.map((l) => l.label).join(", ")}` : "";
  return `${pane.unit}: ${names}, ${span}, ${values}${limits}`;
}

function legendFor(pane) {
  const items = pane.results.map((r, i) => {
    const pen = PENS[i % PENS.length];
    const readout = el("span", { class: "readout" });
    r.readout = readout;
    return el(
      "li",
      { class: "legend-item" },
      penSwatch(pen),
      el("span", { text: r.series.label }),
      r.error ? el("span", { class: "unavailable", text: ` \u2014 not available: ${r.error}` }) : r.columns && r.columns.t.length === 0 ? el("span", { class: "unavailable", text: " \u2014 no data in this window" }) : null,
      readout,
    );
  });
  const limits = pane.limits.map((l) =>
    el("li", { class: "legend-item limit-item" }, el("span", { class: `limit-swatch limit-${l.tier}`, "aria-hidden": "true" }), el("span", { text: l.label })),
  );
  return el("div", { class: "pane-head" }, el("h2", { class: "pane-unit", text: pane.unit }), el("ul", { class: "legend" }, ...items, ...limits));
}

function showReadout(u, pane) {
  const idx = u.cursor.idx;
  pane.results.forEach((r, i) => {
    if (!r.readout) return;
    const v = idx === null || idx === undefined ? null : u.data[1 + i * 3]?.[idx];
    r.readout.textContent = v === null || v === undefined ? "" : ` ${formatNumber(v, Math.abs(v) >= 100 ? 0 : 1)} ${pane.unit} at ${formatDateTime(u.data[0][idx])}`;
  });
}

async function fetchSeries(s, win, points) {
  const q = new URLSearchParams({ signal: s.key, from: String(Math.round(win.fromMs)), to: String(Math.round(win.toMs)), points: String(points) });
  try {
    const body = await getJSON(`/api/trend?${q}`);
    return { series: s, columns: trendColumns(body.points), error: null };
  } catch (err) {
    return { series: s, columns: null, error: err instanceof Error ? err.message : String(err) };
  }
}

/** `reuseState`: the state just fetched at start is fresh enough for the first drawing. */
async function refresh(reuseState = false) {
  const ticket = ++loading;
  clearTimeout(refreshTimer);
  try {
    const [fresh, adv] = await Promise.all([reuseState ? state : getJSON("/api/state"), getJSON(`/api/advisories?limit=${HISTORY_LIMIT}`)]);
    state = fresh;
    const win = currentWindow();
    const panes = panesFor(page.series, catalog);
    const points = pointsFor($("plots").clientWidth);
    const results = await Promise.all(page.series.map((key) => catalog.find((s) => s.key === key)).filter(Boolean).map((s) => fetchSeries(s, win, points)));
    if (ticket !== loading) return; // a newer refresh has started
    for (const pane of panes) {
      pane.results = pane.series.map((s) => results.find((r) => r.series.key === s.key));
      pane.limits = [];
      for (const s of pane.series) for (const l of limitsFor(s.key, state, adv.history, configuredRules)) if (!pane.limits.some((x) => x.value === l.value && x.tier === l.tier)) pane.limits.push(l);
    }
    const marks = advisoryMarks(adv.history, win.fromMs, win.toMs, state.advisories);
    for (const p of plots) p.destroy();
    plots = [];
    for (const node of $("plots").querySelectorAll(".pane")) node.remove();
    panes.forEach((pane, i) => plots.push(buildPane(pane, i, panes.length, win, marks)));
    renderMarks(marks);
    renderHeader(win);
    showProblem(panes.length === 0 ? "No series chosen: pick some under \u201cSignals\u201d." : null);
    document.body.dataset.plotted = String(plots.length);
  } catch (err) {
    showProblem(`Could not load the trends: ${err instanceof Error ? err.message : String(err)}`);
  } finally {
    if (ticket === loading && page.zoom === null) refreshTimer = setTimeout(() => void refresh(), REFRESH_MS);
  }
}

function renderHeader(win) {
  if (state.advisoryOnly) $("advisory-only").textContent = state.advisoryOnly;
  $("site-name").textContent = `\u00b7 ${state.site.name}, ${state.site.plant}`;
  $("data-time").textContent = formatDateTime(state.nowMs);
  const zoomed = page.zoom !== null ? " (zoomed)" : "";
  $("window-text").textContent = `${formatDateTime(win.fromMs)} \u2013 ${formatDateTime(win.toMs)} \u00b7 ${formatAge(win.toMs - win.fromMs)}${zoomed}`;
  $("later").disabled = win.toMs >= state.nowMs;
}

function renderMarks(marks) {
  const newestFirst = [...marks].reverse();
  $("marks").replaceChildren(
    ...newestFirst.map((m) =>
      el(
        "li",
        { class: `mark mark-${m.tier}${m.hollow ? " is-hollow" : ""}`, "data-advisory-id": m.advisoryId },
        tierShape(m.tier, m.hollow),
        el("span", { class: `tier-word word-${m.tier}`, text: m.tier }),
        el("span", { class: "mark-time", text: formatDateTime(m.atMs) }),
        el("span", { class: "mark-what", text: `${m.transition === "clear" ? "returned to normal" : m.transition}: ${m.title}` }),
        el("span", { class: "mark-why", text: m.why }),
      ),
    ),
  );
  $("marks-count").textContent = marks.length ? `\u00b7 ${marks.length}` : "";
  $("marks-none").hidden = marks.length > 0;
}

async function start() {
  try {
    state = await getJSON("/api/state");
  } catch (err) {
    showProblem(`The daemon cannot be reached: ${err instanceof Error ? err.message : String(err)}`);
    return;
  }
  // Without the rules (an older daemon) the limits of the advisories seen are still drawn.
  configuredRules = await getJSON("/api/rules").then((b) => b.rules ?? [], () => []);
  catalog = seriesCatalog(state);
  const parsed = parseQuery(window.location.search, catalog, state);
  page = { range: parsed.range, series: parsed.series, zoom: parsed.zoom };
  if (parsed.unknown.length) showProblem(`Not offered by this daemon, left out: ${parsed.unknown.join(", ")}`);
  if (window.matchMedia("(min-width: 901px)").matches) $("picker").open = true;
  $("zoom-in").addEventListener("click", () => zoomBy(0.5));
  $("zoom-out").addEventListener("click", () => zoomBy(2));
  $("earlier").addEventListener("click", () => pan(-1));
  $("later").addEventListener("click", () => pan(1));
  $("zoom-reset").addEventListener("click", () => navigate({ zoom: null }));
  let resizeTimer = null;
  window.addEventListener("resize", () => {
    clearTimeout(resizeTimer);
    resizeTimer = setTimeout(() => {
      const width = Math.max(280, $("plots").clientWidth - 8);
      for (const p of plots) p.setSize({ width, height: paneHeight(plots.length) });
    }, 150);
  });
  renderRanges();
  renderPicker();
  await refresh(true);
}

void start();
