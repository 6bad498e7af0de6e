// The audit trail (audit.html): GET /api/audit, for the engineer and admin roles only; the
// page says so, and offers the login, when the session lacks the role.
import { el } from "./dom.js";
import { formatDateTime } from "./glance-model.js";
import { auditDetailText, mayReadAudit } from "./pages-model.js";
import { $, getJSON, initPage, showPlantHead, showProblem, table } from "./pages.js";
import { askLogin } from "./session.js";

const LIMIT = 500;

async function render(session) {
  try {
    showPlantHead(await getJSON("/api/state").catch(() => null));
  } catch {
    // The header stays as it is; the audit below says what is wrong.
  }
  if (!mayReadAudit(session)) {
    const login = el("button", { type: "button", class: "btn", text: "Log in" });
    login.addEventListener("click", () => askLogin("Log in as an engineer or an admin to read the audit trail."));
    $("main").replaceChildren(
      el(
        "section",
        { class: "panel panel-wide", "aria-labelledby": "h-audit" },
        el("h2", { id: "h-audit", text: "Audit trail" }),
        el("p", { text: session?.user ? `The audit trail needs the engineer or admin role; ${session.user} is logged in as ${session.role}.` : "The audit trail needs a login with the engineer or admin role." }),
        session?.user ? null : login,
      ),
    );
    document.body.dataset.rendered = "true";
    return;
  }
  try {
    const { entries } = await getJSON(`/api/audit?limit=${LIMIT}`);
    showProblem(null);
    $("main").replaceChildren(
      el(
        "section",
        { class: "panel panel-wide", "aria-labelledby": "h-audit" },
        el("h2", { id: "h-audit" }, "Audit trail ", el("span", { class: "count", text: `(latest ${entries.length})` })),
        table(
          "Logins, logouts, commands on advisories, account changes and config loads; newest first",
          ["when", "who", "what", "on what", "source", "detail"],
          entries.map((e) => [formatDateTime(e.atMs), e.actor, e.action, e.target ?? "\u2014", e.source, auditDetailText(e.detail) || "\u2014"]),
        ),
      ),
    );
    document.body.dataset.rendered = "true";
  } catch (err) {
    showProblem(`Could not load the audit trail: ${err instanceof Error ? err.message : String(err)}`);
  }
}

void initPage({ title: "Audit trail", current: "audit.html" }, render);
