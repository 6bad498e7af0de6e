// The advisory list and history page (advisories.html?unit=&tier=&rule=): the advisories on
// screen now with everything known about them (cause, consequence, what to check, where the
// threshold comes from) and the commands the session's role allows, then the stored transitions
// (GET /api/advisories?limit=N), filtered by unit, tier and rule.
import { el } from "./dom.js";
import { SHELVE_CHOICES, advisoryActions, advisoryMarks, advisoryStateText, commandBody, formatNumber, formatWhen, sortAdvisories } from "./glance-model.js";
import { filterHistory, historyFacets, historyFilterQuery, outOfServiceBody, pageActions, parseHistoryFilter } from "./pages-model.js";
import { $, facts, getJSON, initPage, showPlantHead, showProblem, table, tierBadge } from "./pages.js";
import { commandAccess } from "./session-model.js";
import { askLogin, currentSession, sendCommand } from "./session.js";

const REFRESH_MS = 10_000;
const LIMITS = [100, 500, 1000];
const LABELS = { ack: "Acknowledge", reset: "Reset", shelve: "Shelve", unshelve: "Unshelve", "out-of-service": "Out of service", "return-to-service": "Return to service" };

let filter = parseHistoryFilter(window.location.search);
let limit = LIMITS[0];
let rules = [];
let timer = null;
/** An open command form is kept across refreshes (what was typed stays). */
let openForm = null;
let formCount = 0;

function commandForm(a, kind, session) {
  formCount += 1;
  const n = formCount;
  const needsReason = kind === "shelve" || kind === "out-of-service";
  const reason = el("input", { type: "text", id: `cmd-reason-${n}`, maxlength: 500 });
  const choices = SHELVE_CHOICES.map((c) => el("label", { class: "choice" }, el("input", { type: "radio", name: `cmd-for-${n}`, value: c.id }), ` ${c.label}`));
  const error = el("p", { class: "cmd-error", role: "alert" });
  const submit = el("button", { type: "submit", class: "cmd", text: LABELS[kind] });
  const cancel = el("button", { type: "button", class: "cmd", text: "Cancel" });
  const form = el(
    "form",
    { class: "cmd-form", novalidate: true },
    el("p", { class: "cmd-what", text: `${LABELS[kind]} ${a.tier} \u201c${a.title}\u201d as ${session.user}` }),
    needsReason ? el("div", { class: "cmd-field" }, el("label", { for: reason.id, text: "Reason" }), reason) : null,
    kind === "shelve" ? el("fieldset", { class: "cmd-for" }, el("legend", { text: "Shelve for" }), el("div", { class: "choices" }, ...choices)) : null,
    el("div", { class: "cmd-buttons" }, submit, cancel),
    error,
  );
  cancel.addEventListener("click", () => {
    openForm = null;
    void render();
  });
  form.addEventListener("submit", async (event) => {
    event.preventDefault();
    const made = outOfServiceBody(kind, reason.value) ?? commandBody(kind, { reason: reason.value, choice: form.querySelector("input:checked")?.value });
    if (made.error) {
      error.textContent = made.error;
      return;
    }
    submit.disabled = true;
    try {
      const response = await sendCommand(`/api/advisories/${encodeURIComponent(a.id)}/${kind}`, made.body);
      const body = await response.json().catch(() => null);
      if (!response.ok) {
        error.textContent = response.status === 401 ? "Not done: your session has ended. Log in and give the command again." : `Not done: ${body?.message ?? `the daemon answered HTTP ${response.status}`}`;
        return;
      }
      openForm = null;
      void render();
    } catch (err) {
      error.textContent = `Not done: the daemon cannot be reached (${err instanceof Error ? err.message : String(err)}).`;
    } finally {
      submit.disabled = false;
    }
  });
  return form;
}

function advisoryCard(a, nowMs, session) {
  const st = advisoryStateText(a, nowMs);
  const marks = advisoryMarks(a);
  const rule = rules.find((r) => r.id === a.ruleId);
  const tiersText = rule?.tiers ? Object.entries(rule.tiers).map(([t, v]) => `${t} ${formatNumber(v, 1)} ${a.unit}`).join(", ") : null;
  const buttons = pageActions(a, advisoryActions(a))
    .filter((kind) => commandAccess(session, kind) !== "not-allowed")
    .map((kind) => {
      const b = el("button", { type: "button", class: "cmd", text: LABELS[kind], "aria-label": `${LABELS[kind]}: ${a.title}` });
      b.addEventListener("click", () => {
        if (commandAccess(currentSession(), kind) === "login") {
          askLogin(`Log in to ${LABELS[kind].toLowerCase()} \u201c${a.title}\u201d.`);
          return;
        }
        openForm = { id: a.id, kind, node: null };
        void render();
      });
      return b;
    });
  let form = null;
  if (openForm && openForm.id === a.id && session.user) {
    openForm.node ??= commandForm(a, openForm.kind, session);
    form = openForm.node;
  }
  return el(
    "li",
    { class: `advisory-card card-${a.tier}`, "data-advisory-id": a.id },
    el("h3", {}, tierBadge(a.tier), el("span", { text: a.title }), st.word ? el("span", { class: "note", text: `(${st.word})` }) : null),
    facts([
      ["state", `${st.text}${st.detail ? `; ${st.detail}` : ""}${marks.length ? ` \u00b7 ${marks.join(", ")}` : ""}`],
      ["value", `${formatNumber(a.value, 2)} ${a.unit} against ${a.direction === "low" ? "low" : "high"} limit ${formatNumber(a.limit, 2)} ${a.unit} (${a.quantity})`],
      ["tiers of the rule", tiersText ?? (a.states ? `states ${a.states.join(", ")}` : "\u2014")],
      ["raised", `${formatWhen(a.raisedAtMs, nowMs)}; last change ${formatWhen(a.lastChangeMs, nowMs)}`],
      ["unit", a.unitId ? el("a", { href: `unit.html?unit=${encodeURIComponent(a.unitId)}`, text: a.unitId }) : "plant"],
      ["cause", a.cause],
      ["consequence", a.consequence],
      ["what to check", a.check],
      ["threshold origin", a.origin],
      ["message", a.message],
    ]),
    buttons.length ? el("div", { class: "actions" }, ...buttons) : null,
    form,
  );
}

function select(id, label, value, options, onChange) {
  const s = el("select", { id }, el("option", { value: "", text: "all" }), ...options.map((o) => el("option", { value: o, text: o, selected: o === value })));
  s.addEventListener("change", () => onChange(s.value));
  return el("span", {}, el("label", { for: id, text: label }), s);
}

function historySection(history, active, nowMs) {
  const facets = historyFacets(history, rules);
  const setFilter = (part) => {
    filter = { ...filter, ...part };
    window.history.replaceState(null, "", `advisories.html${historyFilterQuery(filter)}`);
    void render();
  };
  const shown = filterHistory(history, filter, rules, active);
  const limitSelect = el("select", { id: "f-limit" }, ...LIMITS.map((n) => el("option", { value: String(n), text: `last ${n}`, selected: n === limit })));
  limitSelect.addEventListener("change", () => {
    limit = Number(limitSelect.value);
    void render();
  });
  return el(
    "section",
    { class: "panel panel-wide", "aria-labelledby": "h-history" },
    el("h2", { id: "h-history" }, "History ", el("span", { class: "count", text: `(${shown.length} of ${history.length} transitions)` })),
    el(
      "div",
      { class: "filters", role: "group", "aria-label": "filter the history" },
      select("f-unit", "Unit", filter.unit, facets.units, (v) => setFilter({ unit: v })),
      select("f-tier", "Tier", filter.tier, facets.tiers, (v) => setFilter({ tier: v })),
      select("f-rule", "Rule", filter.rule, facets.rules, (v) => setFilter({ rule: v })),
      el("span", {}, el("label", { for: "f-limit", text: "Read" }), limitSelect),
    ),
    shown.length === 0
      ? el("p", { class: "none", text: "No transitions match." })
      : table(
          "Newest first; who is \u201cmillwarden\u201d for the rules' own decisions",
          ["when", "rule", "tier", "transition", "from \u2192 to", "value", "limit", "by", "why"],
          shown.map((t) => [formatWhen(t.atMs, nowMs), t.ruleId, tierBadge(t.tier), t.transition, `${t.from} \u2192 ${t.to}`, formatNumber(t.value, 2), formatNumber(t.limit, 2), t.by, t.why || "\u2014"]),
          [5, 6],
        ),
  );
}

async function render() {
  clearTimeout(timer);
  try {
    const [state, adv, r] = await Promise.all([getJSON("/api/state"), getJSON(`/api/advisories?limit=${limit}`), rules.length ? { rules } : getJSON("/api/rules")]);
    rules = r.rules;
    showPlantHead(state);
    showProblem(null);
    const session = currentSession();
    const active = sortAdvisories(adv.active);
    const activeShown = active.filter((a) => (!filter.unit || a.unitId === filter.unit) && (!filter.tier || a.tier === filter.tier) && (!filter.rule || a.ruleId === filter.rule));
    const current = el(
      "section",
      { class: "panel panel-wide", "aria-labelledby": "h-current" },
      el("h2", { id: "h-current" }, "On screen now ", el("span", { class: "count", text: `(${activeShown.length})` })),
      session.user ? null : el("p", { class: "note", text: "Log in to acknowledge, shelve or reset; out of service needs the engineer role." }),
      activeShown.length ? el("ol", { class: "card-list" }, ...activeShown.map((a) => advisoryCard(a, state.nowMs, session))) : el("p", { class: "none", text: "No advisory on screen matches." }),
    );
    // Keep the focus inside an open form across the re-render.
    const focused = document.activeElement?.id;
    $("main").replaceChildren(current, historySection(adv.history, adv.active, state.nowMs));
    if (focused) document.getElementById(focused)?.focus();
    document.body.dataset.rendered = "true";
  } catch (err) {
    showProblem(`Could not load the advisories: ${err instanceof Error ? err.message : String(err)}`);
  } finally {
    timer = setTimeout(() => void render(), openForm ? REFRESH_MS * 3 : REFRESH_MS);
  }
}

void initPage({ title: "Advisories", current: "advisories.html" }, render);
