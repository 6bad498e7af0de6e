// What the engineer's pages share: the advisory-only banner in the daemon's words, the header
// with the data time and the navigation, the login (session.js), reading the API, and the tier badge.
import { el } from "./dom.js";
import { formatDateTime } from "./glance-model.js";
import { askLogin, currentSession, initSession, onSessionChange } from "./session.js";

export const $ = (id) => /** @type {HTMLElement} */ (document.getElementById(id));

/** GET a JSON route; a refusal throws with the daemon's own message (401 asks for a login). */
export async function getJSON(path) {
  const response = await fetch(path, { cache: "no-store" });
  const body = await response.json().catch(() => null);
  if (response.status === 401) askLogin("This site needs a login to show the plant.");
  if (!response.ok) {
    const err = new Error(body?.message ?? `${path}: HTTP ${response.status}`);
    err.status = response.status;
    throw err;
  }
  return body;
}

export function showProblem(text) {
  const p = $("problem");
  p.textContent = text ?? "";
  p.hidden = !text;
}

/** The tier as a word in a box (the colour never stands alone). */
export function tierBadge(tier) {
  return el("span", { class: `tier tier-${tier}`, text: tier });
}

/** The banner and the data time from a plant state (the daemon's wording of "advisory only"). */
export function showPlantHead(state) {
  if (state?.advisoryOnly) $("advisory-only").textContent = state.advisoryOnly;
  if (state?.site) $("site-name").textContent = `${state.site.name} \u00b7 ${state.site.plant}`;
  if (Number.isFinite(state?.nowMs)) $("data-time").textContent = formatDateTime(state.nowMs);
}

/** A label/value list: [[label, text or node], ...]. */
export function facts(rows) {
  return el("dl", { class: "facts" }, ...rows.flatMap(([label, value]) => [el("dt", { text: label }), el("dd", {}, typeof value === "string" ? document.createTextNode(value) : value)]));
}

/** A table with a header row; cells are text or nodes; columns named in `numeric` are right-aligned. */
export function table(caption, head, rows, numeric = []) {
  const cls = (i) => (numeric.includes(i) ? "num" : null);
  return el(
    "div",
    // A wide table scrolls sideways on a phone: the region takes the keyboard focus to scroll it.
    { class: "table-wrap", tabindex: "0", role: "region", "aria-label": caption },
    el(
      "table",
      {},
      el("caption", { class: "note", text: caption }),
      el("thead", {}, el("tr", {}, ...head.map((h, i) => el("th", { scope: "col", class: cls(i), text: h })))),
      el("tbody", {}, ...rows.map((r) => el("tr", {}, ...r.map((c, i) => el("td", { class: cls(i) }, typeof c === "string" ? document.createTextNode(c) : c))))),
    ),
  );
}

/** The pages the navigation links, in its order (the glance screen's header links the same). */
export const NAV_PAGES = [
  { href: "./", label: "Glance screen" },
  { href: "trends.html", label: "Trends" },
  { href: "advisories.html", label: "Advisories" },
  { href: "handover.html", label: "Handover" },
  { href: "audit.html", label: "Audit trail" },
  { href: "deliveries.html", label: "Deliveries" },
];

/**
 * The header (title, navigation with `current` marked, data time, session) and the login form,
 * put in before #problem. The banner stays in each page's own markup, so that it shows even
 * when a script fails; this runs before session.js or the page look up these elements by id.
 */
export function renderPageHead({ title, current }) {
  const field = (id, label, attrs) => el("div", { class: "cmd-field" }, el("label", { for: id, text: label }), el("input", { id, ...attrs }));
  const head = el(
    "header",
    { class: "head" },
    el("h1", { class: "title" }, el("span", { id: "page-title", text: title }), " ", el("span", { class: "site", id: "site-name" })),
    el("nav", { class: "nav", "aria-label": "pages" }, ...NAV_PAGES.map((p) => el("a", { class: "nav-link", href: p.href, "aria-current": p.href === current ? "page" : null, text: p.label }))),
    el("div", { class: "data-time" }, "data time ", el("span", { class: "figure", id: "data-time", text: "\u2014" })),
    el(
      "div",
      { class: "session", id: "session" },
      el("span", { class: "session-who", id: "session-who", text: "not logged in" }),
      el("button", { type: "button", class: "session-button", id: "session-button", text: "Log in" }),
    ),
  );
  const login = el(
    "section",
    { class: "login-panel", id: "login-panel", "aria-labelledby": "h-login", hidden: true },
    el(
      "form",
      { class: "login-form", id: "login-form", novalidate: true },
      el("h2", { id: "h-login", text: "Log in" }),
      el("p", { class: "login-why", id: "login-why" }),
      field("login-user", "User", { name: "username", type: "text", autocomplete: "username", autocapitalize: "none", spellcheck: "false", maxlength: 64 }),
      field("login-password", "Password", { name: "password", type: "password", autocomplete: "current-password", maxlength: 1024 }),
      el(
        "div",
        { class: "cmd-buttons" },
        el("button", { type: "submit", class: "cmd", id: "login-submit", text: "Log in" }),
        el("button", { type: "button", class: "cmd", id: "login-cancel", text: "Cancel" }),
      ),
      el("p", { class: "cmd-error", id: "login-error", role: "alert" }),
      el("p", { class: "login-note", text: "Every command is recorded with your name. Advisory only: the plant's certified protection system governs." }),
    ),
  );
  $("problem").before(head, login);
}

/**
 * Put in the page's header and login form (renderPageHead), wire the session, and call
 * `render` now and after every login or logout.
 */
export async function initPage(headOptions, render) {
  renderPageHead(headOptions);
  onSessionChange(() => void render(currentSession()));
  await initSession();
  await render(currentSession());
}
