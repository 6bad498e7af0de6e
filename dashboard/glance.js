// The glance screen: one WebSocket to /api/live, one copy of the plant state, and a
// render of it after every message.
//
//   GET /api/state ─┐
//   WS /api/live ───┴─▶ applyMessage (live-state.js) ─▶ state ─▶ render()
//                                                        └──▶ CO history (bounded rings)
//
// Nothing is fetched from outside the box. All text goes in through textContent, never
// as markup. Ages come from the data time (state.nowMs), so a frozen feed looks frozen.
import { applyMessage } from "./live-state.js";
import {
  INERTING_TIER,
  INERTING_WORDS,
  createHistory,
  formatAge,
  formatClock,
  formatDateTime,
  formatNumber,
  formatSigned,
  lowestMargin,
  o2BarGeometry,
  pruneHistory,
  readSeries,
  recordPoint,
  sortAdvisories,
  sparklineRuns,
  staleText,
  worstTierFor,
} from "./glance-model.js";

const SPARK_WINDOW_MS = 15 * 60 * 1000;
// Smallest vertical range of a CO sparkline: a few ppm of analyser noise should read as flat.
const SPARK_MIN_SPAN_PPM = 20;
// 15 min at up to 2 updates per second, per CO point.
const history = createHistory(SPARK_WINDOW_MS, 1800);
const RECONNECT_MIN_MS = 1000;
const RECONNECT_MAX_MS = 30_000;
const NAME_KEY = "millwarden.ackName";
// The daemon pushes at least once a second while it runs; this long a silence on an
// open socket is worth saying (a half-open connection looks "live" otherwise).
const QUIET_WARN_MS = 20_000;
const SVG_NS = "http://www.w3.org/2000/svg";

/** @type {import("../src/core/types.js").PlantState | null} */
let state = null;
/** "connecting" before the first contact, then "live" or "lost". */
let connection = "connecting";
let reconnectDelayMs = RECONNECT_MIN_MS;
let reconnectAtMs = 0;
let everConnected = false;
/** Browser time of the last message (only for the "no update for N s" hint). */
let lastMessageAtMs = 0;

const $ = (id) => /** @type {HTMLElement} */ (document.getElementById(id));

/** Change text only when it differs, so live regions do not re-announce every second. */
function setText(node, text) {
  if (node.textContent !== text) node.textContent = text;
}

// ---- small DOM helpers ----

function el(tag, props = {}, ...children) {
  const node = document.createElement(tag);
  for (const [key, value] of Object.entries(props)) {
    if (value === null || value === undefined || value === false) continue;
    if (key === "class") node.className = value;
    else if (key === "text") node.textContent = value;
    else node.setAttribute(key, value === true ? "" : String(value));
  }
  for (const child of children) if (child !== null && child !== undefined) node.append(child);
  return node;
}

function svg(tag, attrs = {}, ...children) {
  const node = document.createElementNS(SVG_NS, tag);
  for (const [key, value] of Object.entries(attrs)) {
    if (value === null || value === undefined) continue;
    if (key === "text") node.textContent = value;
    else node.setAttribute(key, String(value));
  }
  for (const child of children) if (child) node.append(child);
  return node;
}

/** Numbers as people read them: fewer decimals as the magnitude grows. */
function autoDigits(v) {
  const a = Math.abs(v ?? 0);
  return a >= 100 ? 0 : a >= 1 ? 1 : 2;
}

// ---- tier icons: colour + shape + word, so no tier depends on colour alone ----

const TIER_SHAPES = {
  // Circle, triangle, diamond: distinct outlines even in greyscale or for colour-blind eyes.
  notice: () => svg("circle", { class: "shape", cx: 20, cy: 20, r: 16.5 }),
  caution: () => svg("polygon", { class: "shape", points: "20,2.5 38,36 2,36" }),
  warning: () => svg("polygon", { class: "shape", points: "20,1.5 38.5,20 20,38.5 1.5,20" }),
};
const TIER_GLYPH = { notice: "i", caution: "!", warning: "!" };
const TIER_GLYPH_Y = { notice: 27.5, caution: 32, warning: 28 };

function tierIcon(tier, { hollow = false, label = null } = {}) {
  const shape = TIER_SHAPES[tier] ?? TIER_SHAPES.notice;
  return svg(
    "svg",
    {
      class: `tier-icon tier-${tier}${hollow ? " is-hollow" : ""}`,
      viewBox: "0 0 40 40",
      role: "img",
      "aria-label": label ?? `${tier} icon`,
    },
    shape(),
    svg("text", { class: "glyph", x: 20, y: TIER_GLYPH_Y[tier] ?? 27, "text-anchor": "middle", text: TIER_GLYPH[tier] ?? "?" }),
  );
}

function unknownIcon() {
  return svg(
    "svg",
    { class: "tier-icon", viewBox: "0 0 40 40", role: "img", "aria-label": "unknown" },
    svg("rect", { class: "shape", x: 4, y: 4, width: 32, height: 32, fill: "none", "stroke-dasharray": "5 3" }),
    svg("text", { class: "glyph", x: 20, y: 28, "text-anchor": "middle", text: "?" }),
  );
}

// ---- value cells: stale and unknown values never show a number ----

/**
 * A figure with its unit; when the signal behind it is stale, "no data N min" stands
 * in its place; when the derived value is unknown, an em dash with the reason.
 */
function valueCell({ value, digits, unit, signal, unknownReason, signed = false, cls = "value" }) {
  const stale = signal && state ? staleText(signal, state.nowMs) : null;
  if (stale !== null) {
    return el("span", { class: `${cls} is-stale`, title: `${signal.name}: no update within 3 × ${signal.expectedPeriodS} s` }, stale);
  }
  if (unknownReason) {
    return el("span", {}, el("span", { class: cls, title: unknownReason, "aria-label": `unknown: ${unknownReason}` }, "\u2014"));
  }
  const text = signed ? formatSigned(value, digits) : formatNumber(value, digits);
  return el("span", {}, el("span", { class: cls }, text), unit ? el("span", { class: "unit-sym", text: ` ${unit}` }) : null);
}

const signalById = (id) => state?.signals.find((s) => s.id === id);
const unitName = (id) => (id === null ? "plant" : (state?.units.find((u) => u.id === id)?.name ?? id));

// ---- advisories ----

/** Advisory rows persist across renders (keyed by id) so a blinking icon keeps its rhythm. */
const advisoryRows = new Map();

function advisoryStateText(a) {
  if (a.state === "unack") return { text: "unacknowledged", acked: false };
  if (a.state === "rtn-unack") return { text: "returned to normal \u00b7 unacknowledged", acked: false };
  if (a.state === "ack") {
    const at = a.ackedAtMs !== null ? ` at ${formatClock(a.ackedAtMs)}` : "";
    return { text: `acknowledged by ${a.ackedBy ?? "?"}${at}`, acked: true };
  }
  return { text: "normal", acked: true };
}

function createAdvisoryRow(a) {
  const row = {
    li: el("li", { class: "advisory" }),
    iconKey: "",
    icon: null,
    title: el("div", { class: "advisory-title" }),
    age: el("div", { class: "advisory-age" }),
    detail: el("div", { class: "advisory-detail" }),
    stateText: el("div", { class: "advisory-state" }),
    button: el("button", { class: "ack", type: "button", text: "Acknowledge" }),
    advisory: a,
  };
  row.button.addEventListener("click", () => acknowledge(row.advisory, row.button));
  row.li.append(row.title, row.age, row.detail, row.stateText, row.button);
  return row;
}

function updateAdvisoryRow(row, a) {
  row.advisory = a;
  const hollow = a.state === "rtn-unack";
  const unacked = a.state === "unack" || a.state === "rtn-unack";
  row.li.className = `advisory tier-${a.tier}${unacked ? " is-unack" : ""}`;
  row.li.title = `${a.message}\nCheck: ${a.check}\nCause: ${a.cause}\nConsequence: ${a.consequence}\nThreshold origin: ${a.origin}`;
  const iconKey = `${a.tier}/${hollow}`;
  if (row.iconKey !== iconKey) {
    const icon = tierIcon(a.tier, { hollow, label: `${a.tier}${hollow ? ", returned to normal" : ""}` });
    if (row.icon) row.icon.replaceWith(icon);
    else row.li.prepend(icon);
    row.icon = icon;
    row.iconKey = iconKey;
  }
  row.title.replaceChildren(el("span", { class: `tier-word word-${a.tier}`, text: a.tier }), a.title);
  const ageText = state ? formatAge(state.nowMs - a.raisedAtMs) : "";
  row.age.textContent = ageText;
  row.age.setAttribute("aria-label", `raised ${ageText} ago`);
  const digits = autoDigits(a.limit);
  const limitWord = a.direction === "high" ? "high limit" : "low limit";
  row.detail.replaceChildren(
    `${unitName(a.unitId)} \u00b7 `,
    a.value === null
      ? el("span", { class: "value", title: "no current value" }, "\u2014")
      : el("span", { class: "value", text: `${formatNumber(a.value, digits)} ${a.unit}` }),
    ` \u2014 ${limitWord} ${formatNumber(a.limit, digits)} ${a.unit}`,
  );
  const s = advisoryStateText(a);
  row.stateText.textContent = s.text;
  row.stateText.classList.toggle("is-acked", s.acked);
  row.button.hidden = !unacked;
  row.button.setAttribute("aria-label", `Acknowledge ${a.tier}: ${a.title}`);
}

function renderAdvisories() {
  const list = $("advisory-list");
  const sorted = sortAdvisories(state.advisories);
  const seen = new Set();
  sorted.forEach((a, i) => {
    seen.add(a.id);
    let row = advisoryRows.get(a.id);
    if (!row) {
      row = createAdvisoryRow(a);
      advisoryRows.set(a.id, row);
    }
    updateAdvisoryRow(row, a);
    // Move only when out of place: moving a node restarts its blink.
    if (list.children[i] !== row.li) list.insertBefore(row.li, list.children[i] ?? null);
  });
  for (const [id, row] of advisoryRows) {
    if (seen.has(id)) continue;
    row.li.remove();
    advisoryRows.delete(id);
  }
  const unacked = sorted.filter((a) => a.state === "unack" || a.state === "rtn-unack").length;
  $("advisory-count").textContent = sorted.length === 0 ? "" : `· ${sorted.length} (${unacked} unacknowledged)`;
  $("advisory-none").hidden = sorted.length > 0;
  // A wall screen has nobody scrolling: say plainly how many advisories are out of view.
  const box = list.getBoundingClientRect();
  const hidden = [...list.children].filter((li) => li.getBoundingClientRect().bottom > box.bottom + 1).length;
  const more = $("advisory-more");
  more.hidden = hidden === 0 || box.height === 0;
  setText(more, `\u25bc ${hidden} more below (scroll the list)`);
  const top = sorted[0];
  document.title = top ? `(${sorted.length}) ${top.tier}: ${top.title} · millwarden` : "millwarden · glance";
}

async function acknowledge(advisory, button) {
  let remembered = "";
  try {
    remembered = localStorage.getItem(NAME_KEY) ?? "";
  } catch {
    // Storage may be disabled; the name is then asked for every time.
  }
  const answer = window.prompt(`Acknowledge ${advisory.tier} "${advisory.title}".\nYour name (recorded with the time):`, remembered);
  if (answer === null) return;
  const by = answer.trim();
  if (by === "") {
    window.alert("Not acknowledged: a name is needed, the acknowledgement is recorded with who and when.");
    return;
  }
  button.disabled = true;
  try {
    const response = await fetch(`/api/advisories/${encodeURIComponent(advisory.id)}/ack`, {
      method: "POST",
      headers: { "content-type": "application/json" },
      body: JSON.stringify({ by }),
    });
    const body = await response.json().catch(() => null);
    if (!response.ok) {
      window.alert(`Not acknowledged: ${body?.message ?? `the daemon answered HTTP ${response.status}`}`);
      return;
    }
    try {
      localStorage.setItem(NAME_KEY, by);
    } catch {
      // See above.
    }
    // Show the result at once; the daemon's next delta confirms it.
    if (body?.advisory && state) {
      const updated = body.advisory;
      state = {
        ...state,
        advisories: state.advisories.map((a) => (a.id === updated.id ? updated : a)).filter((a) => a.state !== "normal"),
      };
      render();
    }
  } catch (err) {
    window.alert(`Not acknowledged: the daemon cannot be reached (${err instanceof Error ? err.message : String(err)}).`);
  } finally {
    button.disabled = false;
  }
}

// ---- inerting ----

function o2Bar(inerting, tier) {
  const g = o2BarGeometry(inerting);
  const W = 1000;
  const x = (f) => (f * W).toFixed(1);
  const parts = [
    svg("rect", { class: "track", x: 0, y: 10, width: W, height: 40, "vector-effect": "non-scaling-stroke" }),
    svg("rect", { class: "over", x: x(g.limit), y: 10, width: x(1 - g.limit), height: 40 }),
    svg("rect", { class: "band", x: x(g.bandStart), y: 10, width: x(g.limit - g.bandStart), height: 40 }),
  ];
  if (g.value !== null) {
    parts.push(svg("rect", { class: `fill${tier ? ` tier-${tier}` : ""}`, x: 0, y: 19, width: x(g.value), height: 22, "vector-effect": "non-scaling-stroke" }));
  }
  parts.push(svg("line", { class: "limit", x1: x(g.limit), x2: x(g.limit), y1: 1, y2: 59, "vector-effect": "non-scaling-stroke" }));
  const o2 = inerting.o2PctVol === null ? "unknown" : `${formatNumber(inerting.o2PctVol, 1)} % vol`;
  const label =
    `O2 ${o2} ${inerting.basis}, limit ${formatNumber(inerting.limitPctVol, 1)} %, ` +
    `marginal band ${formatNumber(inerting.marginalBandPctPt, 1)} percentage points below the limit`;
  return svg("svg", { class: "bar", viewBox: "0 0 1000 60", preserveAspectRatio: "none", role: "img", "aria-label": label }, ...parts);
}

function renderUnit(unit) {
  const inv = unit.inerting;
  const tier = INERTING_TIER[inv.state] ?? null;
  const word = INERTING_WORDS[inv.state] ?? inv.state;
  const badge =
    tier !== null
      ? el("span", { class: "state-badge" }, tierIcon(tier, { label: tier }), el("span", { class: `state-word tier-word word-${tier}`, text: word }))
      : inv.state === "unknown"
        ? el("span", { class: "state-badge", title: inv.reason }, unknownIcon(), el("span", { class: "state-word", text: word }))
        : el("span", { class: "state-badge" }, el("span", { class: "state-word", text: word }));
  const signal = signalById(inv.o2Signal);
  const unknownReason = inv.o2PctVol === null ? inv.reason || "no O2 value" : null;
  const figures = el(
    "div",
    { class: "unit-figures" },
    el("span", {}, "O", el("sub", { text: "2" }), " ", valueCell({ value: inv.o2PctVol, digits: 1, unit: `% vol ${inv.basis}`, signal, unknownReason })),
    el("span", { class: "aside", text: `limit ${formatNumber(inv.limitPctVol, 1)} % ${inv.basis}`, title: inv.limitSource }),
    el("span", { class: "aside", text: inv.marginPctPt === null ? "margin \u2014" : `margin ${formatSigned(inv.marginPctPt, 1)} pt` }),
  );
  const reason = inv.state !== "inert" ? el("span", { class: "reason", text: inv.reason }) : null;
  return el(
    "div",
    { class: "unit" },
    el("div", { class: "unit-head" }, el("span", { class: "unit-name", text: unit.name }), badge),
    figures,
    o2Bar(inv, tier),
    el("div", { class: "bar-scale", "aria-hidden": "true" }, ...["0", "7", "14", "21 % vol"].map((t) => el("span", { text: t }))),
    reason,
  );
}

function renderUnits() {
  const watched = state.units.filter((u) => u.inerting !== null);
  const list = $("unit-list");
  if (watched.length === 0) {
    list.replaceChildren(el("p", { class: "none", text: "No unit has an O2 watch configured." }));
    return;
  }
  list.replaceChildren(...watched.map(renderUnit));
}

// ---- CO ----

function sparkline(point) {
  const W = 120;
  const H = 40;
  const series = readSeries(history, point.id, state.nowMs);
  const { runs, min, max } = sparklineRuns(series, state.nowMs - SPARK_WINDOW_MS, state.nowMs, W, H - 4, SPARK_MIN_SPAN_PPM);
  const label =
    min === null ? `${point.name}: no history yet` : `${point.name}, last 15 min: ${formatNumber(min, 0)} to ${formatNumber(max, 0)} ppm`;
  const node = svg(
    "svg",
    { class: "spark", viewBox: `0 0 ${W} ${H}`, preserveAspectRatio: "none", role: "img", "aria-label": label },
    svg("rect", { class: "frame", x: 0, y: 0, width: W, height: H, "vector-effect": "non-scaling-stroke" }),
    ...runs.map((points) => svg("polyline", { points, transform: "translate(0 2)", "vector-effect": "non-scaling-stroke" })),
  );
  const range = min === null ? "15 min" : `${formatNumber(min, 0)}\u2013${formatNumber(max, 0)} ppm · 15 min`;
  return el("div", { class: "spark-box" }, node, el("span", { class: "spark-range", "aria-hidden": "true", text: range }));
}

function renderCo() {
  const list = $("co-list");
  if (state.coPoints.length === 0) {
    list.replaceChildren(el("p", { class: "none", text: "No CO point configured." }));
    return;
  }
  list.replaceChildren(
    ...state.coPoints.map((p) => {
      const tier = worstTierFor(state.advisories, "co", p.id);
      const signal = signalById(p.signal);
      const unknownReason = p.status === "unknown" ? p.reason || "unknown" : null;
      const gradientReason = unknownReason ?? (p.gradientPpmPerMin === null ? p.reason || "rate not yet computable" : null);
      const inCheck = signal?.functionCheck ? el("span", { class: "tier-word", text: "function check" }) : null;
      return el(
        "div",
        { class: `co${tier ? ` tier-${tier}` : ""}` },
        el(
          "div",
          { class: "co-name" },
          p.name,
          el("span", { class: "co-window", text: ` \u00b7 rate over ${formatAge(p.windowS * 1000)}` }),
          tier ? el("span", { class: `tier-word word-${tier}`, text: tier }) : null,
          inCheck,
        ),
        el(
          "div",
          { class: "co-figures" },
          valueCell({ value: p.coPpm, digits: 0, unit: "ppm", signal, unknownReason }),
          unknownReason ? null : valueCell({ value: p.gradientPpmPerMin, digits: 1, unit: "ppm/min", unknownReason: gradientReason, signed: true, cls: "value rate" }),
        ),
        unknownReason ? el("span", { class: "reason co-reason", text: unknownReason }) : null,
        sparkline(p),
      );
    }),
  );
}

// ---- dew point ----

function renderDew() {
  const lowest = lowestMargin(state.dewPoints);
  $("dew-lowest").replaceChildren(
    lowest === null
      ? el("span", { text: "Lowest margin: unknown at every location" })
      : el("span", {}, "Lowest margin: ", el("strong", { text: lowest.name }), " ", el("span", { class: "value", text: formatNumber(lowest.marginK, 1) }), " K"),
  );
  $("dew-rows").replaceChildren(
    ...state.dewPoints.map((p) => {
      const tier = worstTierFor(state.advisories, "dewpoint", p.id);
      const unknownReason = p.status === "unknown" ? p.reason || "unknown" : null;
      const isLowest = lowest !== null && p.id === lowest.id;
      const cls = [isLowest ? "is-lowest" : "", tier ? `tier-${tier}` : ""].filter(Boolean).join(" ");
      return el(
        "tr",
        { class: cls || null },
        el(
          "td",
          {},
          p.name,
          isLowest ? el("span", { class: "lowest-tag", text: "lowest" }) : null,
          tier ? el("span", { class: `tier-word word-${tier}`, text: tier }) : null,
          unknownReason ? el("span", { class: "reason", text: unknownReason }) : null,
        ),
        el("td", {}, valueCell({ value: p.gasTempC, digits: 1 })),
        el("td", {}, valueCell({ value: p.dewPointC, digits: 1, unknownReason: p.dewPointC === null ? unknownReason ?? "not computable" : null })),
        el("td", { class: "margin" }, valueCell({ value: p.marginK, digits: 1, unknownReason })),
      );
    }),
  );
}

// ---- data health ----

function renderDataHealth() {
  const problems = [];
  for (const s of state.signals) {
    const stale = staleText(s, state.nowMs);
    if (stale !== null) problems.push(`${s.name}: ${stale}`);
    else if (s.functionCheck) problems.push(`${s.name}: function check`);
    else if (s.quality === "bad") problems.push(`${s.name}: bad${s.qualityReason ? ` (${s.qualityReason})` : ""}`);
    else if (s.quality === "uncertain") problems.push(`${s.name}: uncertain${s.qualityReason ? ` (${s.qualityReason})` : ""}`);
  }
  const node = $("data-health");
  if (problems.length === 0) {
    node.replaceChildren(`All ${state.signals.length} signals fresh and good.`);
    return;
  }
  node.replaceChildren(
    el("span", { class: "problem", text: `${problems.length} of ${state.signals.length} signals need attention: ` }),
    problems.join(" \u00b7 "),
  );
}

// ---- connection ----

function renderConnection() {
  const conn = $("conn");
  const text = $("conn-text");
  const lost = connection === "lost";
  conn.classList.toggle("is-lost", lost);
  document.body.classList.toggle("is-offline", lost);
  const quietS = connection === "live" && lastMessageAtMs > 0 ? Math.floor((Date.now() - lastMessageAtMs) / 1000) : 0;
  const quiet = quietS * 1000 >= QUIET_WARN_MS;
  conn.classList.toggle("is-quiet", quiet);
  setText(text, connection === "live" ? (quiet ? `live \u00b7 no update for ${formatAge(quietS * 1000)}` : "live") : lost ? "connection lost" : "connecting");
  const strip = $("conn-lost");
  strip.hidden = !lost;
  if (lost) {
    const since = state ? `values frozen since ${formatClock(state.nowMs)}` : "no data received yet";
    const wait = Math.max(0, Math.ceil((reconnectAtMs - Date.now()) / 1000));
    setText($("conn-lost-text"), `\u2014 ${since} \u00b7 ${wait > 0 ? `reconnecting in ${wait} s` : "reconnecting"}`);
  }
}

// ---- render ----

function render() {
  renderConnection();
  if (state === null) return;
  if (state.advisoryOnly) $("advisory-only").textContent = state.advisoryOnly;
  $("site-name").textContent = state.site.name;
  $("plant-name").textContent = state.site.plant;
  $("data-time").textContent = formatDateTime(state.nowMs);
  renderAdvisories();
  renderUnits();
  renderCo();
  renderDew();
  renderDataHealth();
}

function recordHistory() {
  for (const p of state.coPoints) {
    const stale = staleText(signalById(p.signal), state.nowMs) !== null;
    recordPoint(history, p.id, state.nowMs, p.status === "ok" && !stale ? p.coPpm : null);
  }
  pruneHistory(history, state.coPoints.map((p) => p.id));
}

function receive(msg) {
  lastMessageAtMs = Date.now();
  const next = applyMessage(state, msg);
  if (next === state) return;
  const first = state === null;
  state = next;
  if (state !== null) recordHistory();
  if (first && state !== null) void seedHistory(state.nowMs);
  render();
}

// A screen opened mid-shift shows the last 15 minutes at once, from the historian,
// instead of an empty sparkline that fills over the next quarter of an hour.
async function seedHistory(nowMs) {
  await Promise.all(
    state.coPoints.map(async (p) => {
      try {
        const q = new URLSearchParams({ signal: p.signal, from: String(nowMs - SPARK_WINDOW_MS), to: String(nowMs) });
        const response = await fetch(`/api/trend?${q}`, { cache: "no-store" });
        if (!response.ok) return;
        const { points } = await response.json();
        const live = readSeries(history, p.id, state.nowMs);
        const firstLive = live.length ? live[0][0] : Number.POSITIVE_INFINITY;
        history.rings.delete(p.id);
        for (const [tMs, value, quality] of points) if (tMs < firstLive) recordPoint(history, p.id, tMs, quality === "bad" ? null : value);
        for (const [tMs, value] of live) recordPoint(history, p.id, tMs, value);
      } catch {
        // The live feed fills the line by itself.
      }
    }),
  );
  render();
}

async function resync() {
  try {
    const response = await fetch("/api/state", { cache: "no-store" });
    if (!response.ok) return;
    const fresh = await response.json();
    // A live message may have overtaken the request: never step back in time.
    if (state === null || fresh.nowMs >= state.nowMs) receive({ type: "snapshot", state: fresh });
  } catch {
    // The WebSocket's own snapshot covers it.
  }
}

function connect() {
  const url = new URL("/api/live", window.location.href);
  url.protocol = window.location.protocol === "https:" ? "wss:" : "ws:";
  let socket;
  try {
    socket = new WebSocket(url);
  } catch {
    scheduleReconnect();
    return;
  }
  socket.addEventListener("open", () => {
    reconnectDelayMs = RECONNECT_MIN_MS;
    connection = "live";
    if (everConnected) void resync();
    everConnected = true;
    render();
  });
  socket.addEventListener("message", (event) => {
    let msg;
    try {
      msg = JSON.parse(event.data);
    } catch {
      return;
    }
    receive(msg);
  });
  socket.addEventListener("close", () => scheduleReconnect());
}

// Connection hints (countdown, quiet feed) change with the browser clock, not with data.
setInterval(renderConnection, 1000);

function scheduleReconnect() {
  connection = "lost";
  // Jitter spreads many screens reconnecting after a daemon restart; bounds stay 1 s .. 30 s.
  const delay = Math.min(RECONNECT_MAX_MS, Math.max(RECONNECT_MIN_MS, reconnectDelayMs * (0.85 + Math.random() * 0.3)));
  reconnectDelayMs = Math.min(RECONNECT_MAX_MS, reconnectDelayMs * 2);
  reconnectAtMs = Date.now() + delay;
  setTimeout(connect, delay);
  render();
}

void resync();
connect();
render();
