// The login on the glance screen: who is logged in (header), the login form, log out, and
// the one way commands are sent (with the session's CSRF token).
//
//   GET /api/session ─▶ session ─▶ header "user · role" + Log in / Log out
//   login form ─POST /api/login─▶ session (the cookie is the browser's; the CSRF token is kept here, in memory only)
//   sendCommand ─POST + X-CSRF-Token─▶ 401: the session has ended → the login form
//
// The password goes into the request body only: it is never stored, logged or shown, and the
// field is emptied after every try.
import { loginBody, loginErrorText, sessionText } from "./session-model.js";

const NOBODY = { user: null, role: null, csrfToken: null, expiresAtMs: null, requireLoginForViews: false };

/** @type {{ user: string | null, role: string | null, csrfToken: string | null, expiresAtMs: number | null, requireLoginForViews: boolean }} */
let session = NOBODY;
const listeners = new Set();
let wired = false;

const $ = (id) => document.getElementById(id);

export function currentSession() {
  return session;
}

/** Called after every change of the session (login, logout, an ended session). */
export function onSessionChange(listener) {
  listeners.add(listener);
}

function setSession(next) {
  const changed = next.user !== session.user || next.role !== session.role;
  session = next;
  renderSession();
  if (changed) for (const listener of listeners) listener(session);
}

function renderSession() {
  $("session-who").textContent = sessionText(session);
  const button = $("session-button");
  button.textContent = session.user ? "Log out" : "Log in";
  button.setAttribute("aria-label", session.user ? `Log out ${session.user}` : "Log in");
}

/** Open the login form, saying why (e.g. "Log in to acknowledge"). */
export function askLogin(why = "") {
  const panel = $("login-panel");
  $("login-why").textContent = why;
  $("login-error").textContent = "";
  panel.hidden = false;
  const user = $("login-user");
  (user.value.trim() === "" ? user : $("login-password")).focus();
}

function closeLogin() {
  $("login-panel").hidden = true;
  $("login-password").value = "";
  $("login-error").textContent = "";
}

async function submitLogin() {
  const password = $("login-password");
  const made = loginBody($("login-user").value, password.value);
  if (made.error) {
    $("login-error").textContent = made.error;
    return;
  }
  password.value = "";
  const submit = $("login-submit");
  submit.disabled = true;
  $("login-error").textContent = "";
  try {
    const response = await fetch("/api/login", {
      method: "POST",
      headers: { "content-type": "application/json" },
      body: JSON.stringify(made.body),
      cache: "no-store",
    });
    const body = await response.json().catch(() => null);
    if (!response.ok) {
      $("login-error").textContent = loginErrorText(response.status, body, response.headers.get("retry-after"));
      password.focus();
      return;
    }
    closeLogin();
    setSession(body);
  } catch (err) {
    $("login-error").textContent = `Not logged in: the daemon cannot be reached (${err instanceof Error ? err.message : String(err)}).`;
  } finally {
    submit.disabled = false;
  }
}

async function logout() {
  try {
    await fetch("/api/logout", { method: "POST", headers: { "x-csrf-token": session.csrfToken ?? "" }, cache: "no-store" });
  } catch {
    // Unreachable daemon: the session ends there at its expiry; here it ends now.
  }
  setSession({ ...NOBODY, requireLoginForViews: session.requireLoginForViews });
  if (session.requireLoginForViews) askLogin("This site needs a login to show the plant.");
}

/** Ask the daemon who is logged in (the cookie is sent by the browser). */
export async function refreshSession() {
  try {
    const response = await fetch("/api/session", { cache: "no-store" });
    if (!response.ok) return;
    const body = await response.json();
    setSession(body);
    if (body.requireLoginForViews && !body.user) askLogin("This site needs a login to show the plant.");
  } catch {
    // The daemon is not reachable: the connection strip says so; the session stays as it was.
  }
}

/**
 * POST a command with the session's CSRF token. A 401 means the session has ended (expired,
 * logged out elsewhere, account changed): the screen forgets it and asks for a login. A 403
 * for the token means another tab logged in since (the cookie is shared, the token is not): the
 * token is fetched again and the command, refused and so not done, is sent once more.
 */
export async function sendCommand(url, body) {
  const post = () =>
    fetch(url, {
      method: "POST",
      headers: { "content-type": "application/json", "x-csrf-token": session.csrfToken ?? "" },
      body: JSON.stringify(body),
      cache: "no-store",
    });
  let response = await post();
  if (response.status === 403) {
    const answer = await response.clone().json().catch(() => null);
    if (answer?.error === "CSRF_REJECTED") {
      await refreshSession();
      if (session.user) response = await post();
    }
  }
  if (response.status === 401) {
    setSession({ ...NOBODY, requireLoginForViews: session.requireLoginForViews });
    askLogin("Your session has ended: log in again.");
  }
  return response;
}

/** Wire the header button and the login form, then ask who is logged in. */
export function initSession() {
  if (!wired) {
    wired = true;
    $("session-button").addEventListener("click", () => {
      if (session.user) void logout();
      else askLogin("");
    });
    $("login-form").addEventListener("submit", (event) => {
      event.preventDefault();
      void submitLogin();
    });
    $("login-cancel").addEventListener("click", () => closeLogin());
    $("login-form").addEventListener("keydown", (event) => {
      if (event.key === "Escape") closeLogin();
    });
  }
  renderSession();
  return refreshSession();
}
