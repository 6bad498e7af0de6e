// What the engineer's pages share: the advisory-only banner in the daemon's words, the data
// time, the navigation, the login (session.js), reading the API, and the tier badge.
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

/** Wire the session and call `render` now and after every login or logout. */
export async function initPage(render) {
  onSessionChange(() => void render(currentSession()));
  await initSession();
  await render(currentSession());
}
