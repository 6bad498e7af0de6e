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
  SHELVE_CHOICES,
  advisoryActions,
  advisoryMarks,
  advisoryStateText,
  commandBody,
  createHistory,
  dewTrendText,
  formatAge,
  formatClock,
  formatDateTime,
  formatNumber,
  formatSigned,
  formatWhen,
  isHeld,
  lowestMargin,
  needsAttention,
  o2BarGeometry,
  phaseText,
  pruneHistory,
  quietText,
  readSeries,
  recordPoint,
  shortReason,
  signalProblems,
  sparklineRuns,
  splitAdvisories,
  staleText,
  worstTierFor,
} from "./glance-model.js";
import { askLogin, currentSession, initSession, onSessionChange, sendCommand } from "./session.js";
import { commandAccess } from "./session-model.js";
import { el, svg } from "./dom.js";

const SPARK_WINDOW_MS = 15 * 60 * 1000;
// Smallest vertical range of a CO sparkline: a few ppm of analyser noise should read as flat.
const SPARK_MIN_SPAN_PPM = 20;
// 15 min at up to 2 updates per second, per CO point.
const history = createHistory(SPARK_WINDOW_MS, 1800);
const RECONNECT_MIN_MS = 1000;
const RECONNECT_MAX_MS = 30_000;
// The daemon pushes at least once a second while it runs; this long a silence on an
// open socket is worth saying (a half-open connection looks "live" otherwise).
const QUIET_WARN_MS = 20_000;

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


/** replaceChildren writes null as the text "null": leave the absent parts out. */
const present = (...nodes) => nodes.filter((n) => n !== null && n !== undefined);

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

/**
 * Advisory rows persist across renders (keyed by id): a blinking icon keeps its rhythm and an
 * open command form keeps what was typed while the feed updates the row around it.
 */
const advisoryRows = new Map();

/** The buttons on a row, and what their form's submit button says. */
const ACTION_LABELS = { ack: "Acknowledge", reset: "Reset", shelve: "Shelve\u2026", unshelve: "Unshelve" };
const SUBMIT_LABELS = { ack: "Acknowledge", reset: "Reset", shelve: "Shelve", unshelve: "Unshelve" };
let formCount = 0;

/** One small form per row, for every command: for a shelve why and how long (who is the login's). */
function createCommandForm(row) {
  formCount += 1;
  const n = formCount;
  const reason = el("input", { type: "text", id: `cmd-reason-${n}`, maxlength: 500 });
  const choices = SHELVE_CHOICES.map((c) =>
    el("label", { class: "choice" }, el("input", { type: "radio", name: `cmd-for-${n}`, value: c.id }), ` ${c.label}`),
  );
  const f = {
    node: null,
    what: el("p", { class: "cmd-what" }),
    reason,
    reasonField: el("div", { class: "cmd-field" }, el("label", { for: reason.id, text: "Reason" }), reason),
    forField: el("fieldset", { class: "cmd-for" }, el("legend", { text: "Shelve for" }), el("div", { class: "choices" }, ...choices)),
    submit: el("button", { type: "submit", class: "cmd cmd-submit" }),
    cancel: el("button", { type: "button", class: "cmd", text: "Cancel" }),
    error: el("p", { class: "cmd-error", role: "alert" }),
  };
  // novalidate: the form's own checks say what is missing, in the same words as the API.
  f.node = el(
    "form",
    { class: "cmd-form", hidden: true, novalidate: true },
    f.what,
    f.reasonField,
    f.forField,
    el("div", { class: "cmd-buttons" }, f.submit, f.cancel),
    f.error,
  );
  f.node.addEventListener("submit", (event) => {
    event.preventDefault();
    void submitCommand(row);
  });
  f.cancel.addEventListener("click", () => closeCommandForm(row, true));
  f.node.addEventListener("keydown", (event) => {
    if (event.key === "Escape") closeCommandForm(row, true);
  });
  return f;
}

function openCommandForm(row, kind) {
  const f = row.form;
  const a = row.advisory;
  const session = currentSession();
  // Nobody logged in: the button asks for a login; the command is given after it.
  if (commandAccess(session, kind) === "login") {
    askLogin(`Log in to ${SUBMIT_LABELS[kind].toLowerCase()} \u201c${a.title}\u201d.`);
    return;
  }
  row.formKind = kind;
  f.what.textContent = `${SUBMIT_LABELS[kind]} ${a.tier} \u201c${a.title}\u201d as ${session.user}`;
  f.submit.textContent = SUBMIT_LABELS[kind];
  f.reasonField.hidden = kind !== "shelve";
  f.forField.hidden = kind !== "shelve";
  f.error.textContent = "";
  f.node.hidden = false;
  (kind === "shelve" ? f.reason : f.submit).focus();
}

function closeCommandForm(row, returnFocus = false) {
  const f = row.form;
  const kind = row.formKind;
  f.node.hidden = true;
  f.reason.value = "";
  for (const input of f.forField.querySelectorAll("input")) input.checked = false;
  f.error.textContent = "";
  row.formKind = null;
  if (returnFocus && kind && !row.buttons[kind].hidden) row.buttons[kind].focus();
}

async function submitCommand(row) {
  const f = row.form;
  const kind = row.formKind;
  const a = row.advisory;
  if (kind === null) return;
  const made = commandBody(kind, { reason: f.reason.value, choice: f.forField.querySelector("input:checked")?.value });
  if (made.error) {
    f.error.textContent = made.error;
    return;
  }
  f.submit.disabled = true;
  f.error.textContent = "";
  try {
    const response = await sendCommand(`/api/advisories/${encodeURIComponent(a.id)}/${kind}`, made.body);
    const body = await response.json().catch(() => null);
    if (!response.ok) {
      f.error.textContent =
        response.status === 401 ? "Not done: your session has ended. Log in and give the command again." : `Not done: ${body?.message ?? `the daemon answered HTTP ${response.status}`}`;
      return;
    }
    closeCommandForm(row);
    // Show the result at once (null: back to normal, off the screen); the next delta confirms it.
    if (state) {
      const updated = body?.advisory ?? null;
      state = {
        ...state,
        advisories: updated === null ? state.advisories.filter((x) => x.id !== a.id) : state.advisories.map((x) => (x.id === updated.id ? updated : x)),
      };
      render();
    }
  } catch (err) {
    f.error.textContent = `Not done: the daemon cannot be reached (${err instanceof Error ? err.message : String(err)}).`;
  } finally {
    f.submit.disabled = false;
  }
}

function createAdvisoryRow(a) {
  const row = {
    li: el("li", { class: "advisory", "data-advisory-id": a.id }),
    iconKey: "",
    icon: null,
    // The tier's word and the state's word on their own line, so the title gets the row's width.
    tags: el("div", { class: "advisory-tags" }),
    title: el("div", { class: "advisory-title" }),
    age: el("div", { class: "advisory-age" }),
    detail: el("div", { class: "advisory-detail" }),
    stateText: el("div", { class: "advisory-state" }),
    actions: el("div", { class: "advisory-actions" }),
    buttons: {},
    form: null,
    formKind: null,
    advisory: a,
  };
  for (const [kind, label] of Object.entries(ACTION_LABELS)) {
    const button = el("button", { class: "cmd", type: "button", text: label, hidden: true });
    button.addEventListener("click", () => openCommandForm(row, kind));
    row.buttons[kind] = button;
    row.actions.append(button);
  }
  row.form = createCommandForm(row);
  row.li.append(row.tags, row.title, row.age, row.detail, row.stateText, row.actions, row.form.node);
  return row;
}

function updateAdvisoryRow(row, a) {
  row.advisory = a;
  const held = isHeld(a);
  // Outline only once the condition has gone: nobody should read it as present.
  const hollow = !a.conditionActive;
  const attention = needsAttention(a);
  row.li.className = `advisory tier-${a.tier}${attention ? " is-unack" : ""}${held ? " is-held" : ""}`;
  row.li.title = `${a.message}\nCheck: ${a.check}\nCause: ${a.cause}\nConsequence: ${a.consequence}\nThreshold origin: ${a.origin}`;
  const iconKey = `${a.tier}/${hollow}`;
  if (row.iconKey !== iconKey) {
    const icon = tierIcon(a.tier, { hollow, label: `${a.tier}${hollow ? ", condition no longer present" : ""}` });
    if (row.icon) row.icon.replaceWith(icon);
    else row.li.prepend(icon);
    row.icon = icon;
    row.iconKey = iconKey;
  }
  const s = advisoryStateText(a, state ? state.nowMs : a.lastChangeMs);
  row.tags.replaceChildren(
    ...present(
      el("span", { class: `tier-word word-${a.tier}`, text: a.tier }),
      s.word ? el("span", { class: "state-tag", text: s.word }) : null,
      ...advisoryMarks(a).map((m) => el("span", { class: "mark", text: m })),
    ),
  );
  setText(row.title, a.title);
  const ageText = state ? formatAge(state.nowMs - a.raisedAtMs) : "";
  setText(row.age, ageText);
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
  row.stateText.replaceChildren(...present(el("span", { text: s.text }), s.detail ? el("span", { class: "state-detail", text: s.detail }) : null));
  row.stateText.classList.toggle("is-acked", s.acked);
  const actions = advisoryActions(a);
  const session = currentSession();
  for (const [kind, button] of Object.entries(row.buttons)) {
    // Not logged in: shown, and asking for a login; logged in without the role: not shown.
    button.hidden = !actions.includes(kind) || commandAccess(session, kind) === "not-allowed";
    button.setAttribute("aria-label", `${SUBMIT_LABELS[kind]} ${a.tier}: ${a.title}`);
  }
}

/** Put each advisory's row at its place in `list`, creating rows as needed. */
function placeRows(list, advisories) {
  advisories.forEach((a, i) => {
    let row = advisoryRows.get(a.id);
    if (!row) {
      row = createAdvisoryRow(a);
      advisoryRows.set(a.id, row);
    }
    updateAdvisoryRow(row, a);
    // Move only when out of place: moving a node restarts its blink.
    if (list.children[i] !== row.li) list.insertBefore(row.li, list.children[i] ?? null);
  });
}

function renderAdvisories() {
  const { annunciated, held } = splitAdvisories(state.advisories);
  // Gone rows first, so the others move only when their order really changes (moving a row
  // would take the focus out of a form someone is typing in).
  const seen = new Set(state.advisories.map((a) => a.id));
  for (const [id, row] of advisoryRows) {
    if (seen.has(id)) continue;
    row.li.remove();
    advisoryRows.delete(id);
  }
  placeRows($("advisory-list"), annunciated);
  placeRows($("held-list"), held);
  const unacked = annunciated.filter(needsAttention).length;
  $("advisory-count").textContent = annunciated.length === 0 ? "" : `\u00b7 ${annunciated.length} (${unacked} unacknowledged)`;
  $("advisory-none").hidden = annunciated.length > 0;
  $("held-head").hidden = held.length === 0;
  setText($("held-count"), `\u00b7 ${held.length}`);
  showOutOfView();
  const top = annunciated[0];
  document.title = top ? `(${annunciated.length}) ${top.tier}: ${top.title} · millwarden` : "millwarden · glance";
}

/**
 * A wall screen has nobody scrolling: say plainly how many advisories are out of view, above
 * (the list was scrolled, and the highest tier is at the top) and below, and how many of them
 * are warnings, so none is hidden by the size of the screen or by an earlier scroll.
 */
function showOutOfView() {
  const box = $("advisory-scroll").getBoundingClientRect();
  const rows = [...advisoryRows.values()].map((r) => r.li);
  const say = (node, lis, arrow, where) => {
    const warnings = lis.filter((li) => li.classList.contains("tier-warning")).length;
    node.hidden = lis.length === 0 || box.height === 0;
    const warningText = warnings === 0 ? "" : `, ${warnings} of them warning${warnings === 1 ? "" : "s"}`;
    setText(node, `${arrow} ${lis.length} more ${where}${warningText} (scroll the list)`);
  };
  say($("advisory-above"), rows.filter((li) => li.getBoundingClientRect().top < box.top - 1), "\u25b2", "above");
  say($("advisory-more"), rows.filter((li) => li.getBoundingClientRect().bottom > box.bottom + 1), "\u25bc", "below");
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
  const reason = inv.state !== "inert" ? el("span", { class: "reason", title: inv.reason, text: shortReason(inv.reason) }) : null;
  return el(
    "div",
    { class: "unit" },
    el("div", { class: "unit-head" }, el("a", { class: "unit-name unit-link", href: `unit.html?unit=${encodeURIComponent(unit.id)}`, text: unit.name }), badge),
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
      // The level is shown whenever it is known; a rate that cannot be computed yet (a window
      // filling) does not make the level unknown.
      const unknownReason = p.coPpm === null ? p.reason || "unknown" : null;
      const gradientReason = unknownReason ?? (p.gradientPpmPerMin === null || p.status === "unknown" ? p.reason || "rate not yet computable" : null);
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
        // A stale signal already says "no data N s" in place of its figure.
        (unknownReason ?? gradientReason) && staleText(signal, state.nowMs) === null
          ? el("span", { class: "reason co-reason", title: unknownReason ?? gradientReason, text: shortReason(unknownReason ?? `rate: ${gradientReason}`) })
          : null,
        sparkline(p),
      );
    }),
  );
}

// ---- dew point ----

function renderDew() {
  const lowest = lowestMargin(state.dewPoints);
  $("dew-lowest").replaceChildren(
    el("span", { class: "dew-label", text: "Lowest margin" }),
    lowest === null
      ? el("span", { class: "dew-where", text: "unknown at every location" })
      : el(
          "span",
          { class: "dew-figure" },
          el("span", { class: "value", text: formatNumber(lowest.marginK, 1) }),
          el("span", { class: "unit-sym", text: " K" }),
          el("span", { class: "dew-where" }, " at ", el("strong", { text: lowest.name })),
        ),
  );
  const trend = dewTrendText(state.dewPointSummary?.[0]);
  $("dew-trend").replaceChildren(
    ...present(
      trend ? el("span", { text: trend.trend }) : null,
      trend?.time ? el("span", { class: "dew-time", text: ` \u00b7 ${trend.time}` }) : null,
    ),
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
          unknownReason ? el("span", { class: "reason", title: unknownReason, text: shortReason(unknownReason) }) : null,
        ),
        el("td", {}, valueCell({ value: p.gasTempC, digits: 1 })),
        el("td", {}, valueCell({ value: p.dewPointC, digits: 1, unknownReason: p.dewPointC === null ? unknownReason ?? "not computable" : null })),
        el("td", { class: "margin" }, valueCell({ value: p.marginK, digits: 1, unknownReason })),
      );
    }),
  );
}

// ---- operating phase ----

function renderPhases() {
  const phases = state.phases ?? [];
  $("phase-list").replaceChildren(
    ...phases.map((p) => {
      const t = phaseText(p, state.nowMs);
      return el(
        "span",
        { class: `phase phase-${p.phase}`, title: `${unitName(p.unitId)}: ${p.reason}` },
        // The unit's short id keeps the header on one line; its full name is in the tooltip.
        el("span", { class: "phase-unit", text: p.unitId.toUpperCase() }),
        " ",
        el("span", { class: "phase-word", text: t.word }),
        t.since ? el("span", { class: "phase-since", text: ` ${t.since}` }) : null,
      );
    }),
  );
}

// ---- data health ----

function renderDataHealth() {
  const groups = signalProblems(state.signals, state.nowMs);
  const node = $("data-health");
  if (groups.length === 0) {
    node.replaceChildren(`All ${state.signals.length} signals fresh and good.`);
    return;
  }
  const count = groups.reduce((n, g) => n + g.names.length, 0);
  const all = count === state.signals.length;
  node.replaceChildren(
    el("span", { class: "problem", text: `${count} of ${state.signals.length} signals need attention: ` }),
    ...groups.flatMap((g, i) => [
      i > 0 ? " \u00b7 " : null,
      el("strong", { text: g.problem }),
      all && groups.length === 1 ? " (every signal)" : `: ${g.names.join(", ")}`,
    ]).filter((x) => x !== null),
  );
}

// ---- connection ----

function renderConnection() {
  const conn = $("conn");
  const text = $("conn-text");
  const lost = connection === "lost";
  conn.classList.toggle("is-lost", lost);
  const quiet = connection === "live" ? quietText(lastMessageAtMs, Date.now(), QUIET_WARN_MS) : null;
  conn.classList.toggle("is-quiet", quiet !== null);
  // A feed that has gone silent freezes the values as surely as a lost connection.
  document.body.classList.toggle("is-offline", lost || quiet !== null);
  setText(text, connection === "live" ? (quiet !== null ? `live \u00b7 ${quiet}` : "live") : lost ? "connection lost" : "connecting");
  const strip = $("conn-lost");
  strip.hidden = !lost && quiet === null;
  if (quiet !== null) {
    setText($("conn-lost-title"), "No updates");
    const since = state ? `values as of ${formatClock(state.nowMs)} data time` : "no data received yet";
    setText($("conn-lost-text"), `\u2014 the daemon has sent nothing: ${quiet} \u00b7 ${since}`);
  }
  if (lost) {
    setText($("conn-lost-title"), "Connection lost");
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
  // The clock alone while the data is within 12 h of the browser's clock (the header stays one
  // line); the date too when it is not (a replay, an accelerated demo), and always in the tooltip.
  setText($("data-time"), formatWhen(state.nowMs, Date.now()));
  $("data-time").title = formatDateTime(state.nowMs);
  renderPhases();
  renderAdvisories();
  renderUnits();
  renderCo();
  renderDew();
  renderDataHealth();
  // First values on screen, for bench/glance.ts (a standard User Timing mark, read by nobody else).
  if (!firstRenderMarked) {
    firstRenderMarked = true;
    performance.mark("millwarden:first-values");
  }
}

let firstRenderMarked = false;

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

$("advisory-scroll").addEventListener("scroll", showOutOfView, { passive: true });

// Connection hints (countdown, quiet feed) change with the browser clock, not with data.
setInterval(renderConnection, 1000);

function scheduleReconnect() {
  connection = "lost";
  // Jitter spreads many screens reconnecting after a daemon restart; bounds stay 1 s .. 30 s.
  const delay = Math.min(RECONNECT_MAX_MS, Math.max(RECONNECT_MIN_MS, reconnectDelayMs * (0.85 + Math.random() * 0.3)));
  reconnectDelayMs = Math.min(RECONNECT_MAX_MS, reconnectDelayMs * 2);
  reconnectAtMs = Date.now() + delay;
  clearTimeout(reconnectTimer);
  reconnectTimer = setTimeout(connect, delay);
  render();
}

let reconnectTimer = 0;

/** Reconnect now instead of at the scheduled time (after a login). */
function reconnectNow() {
  clearTimeout(reconnectTimer);
  reconnectDelayMs = RECONNECT_MIN_MS;
  connect();
  void resync();
}

let started = false;

/** The first fetch of the state and the live feed. */
function start() {
  if (started) return;
  started = true;
  void resync();
  connect();
}

// A login (or a logout) changes which buttons are shown. Where the views need a login, the
// feed starts with it (or, refused until now, reconnects at once).
onSessionChange((session) => {
  if (session.user && !started) start();
  else if (session.user && connection === "lost") reconnectNow();
  render();
});

// Ask who is logged in first: where the views need a login, connecting before it would only be refused.
void initSession().then(() => {
  const session = currentSession();
  if (!session.requireLoginForViews || session.user) start();
});
render();
