// "Notify this browser": Web Push sign-up beside the session display of the glance screen.
//
//   click ─▶ register /sw.js (scope /) ─▶ GET /api/push/key ─▶ Notification permission
//        ─▶ pushManager.subscribe(VAPID key) ─▶ POST /api/push/subscribe (session + X-CSRF-Token)
//   click again ─▶ DELETE /api/push/subscribe ─▶ unsubscribe
//
// Shown only to a logged-in user, in a browser that has service workers and the Push API, when
// the box has a Web Push channel. The account stands for the roster person of the same name.
import { currentSession, onSessionChange } from "./session.js";

const $ = (id) => document.getElementById(id);
const supported = "serviceWorker" in navigator && "PushManager" in window && "Notification" in window;
let publicKey = null;

function keyBytes(b64url) {
  const b64 = b64url.replace(/-/g, "+").replace(/_/g, "/") + "=".repeat((4 - (b64url.length % 4)) % 4);
  return Uint8Array.from(atob(b64), (c) => c.charCodeAt(0));
}

async function registration() {
  return navigator.serviceWorker.register("/sw.js", { scope: "/" });
}

async function current() {
  const reg = await navigator.serviceWorker.getRegistration("/");
  return reg ? reg.pushManager.getSubscription() : null;
}

function say(text) {
  $("push-status").textContent = text;
}

async function render() {
  const button = $("push-button");
  const s = currentSession();
  if (!supported || !s.user || publicKey === null) {
    button.hidden = true;
    return;
  }
  const sub = await current().catch(() => null);
  button.hidden = false;
  button.textContent = sub ? "Stop notifying this browser" : "Notify this browser";
  button.setAttribute("aria-pressed", sub ? "true" : "false");
}

async function send(method, body) {
  const s = currentSession();
  return fetch("/api/push/subscribe", { method, headers: { "content-type": "application/json", "x-csrf-token": s.csrfToken ?? "" }, body: JSON.stringify(body), cache: "no-store" });
}

async function toggle() {
  const button = $("push-button");
  button.disabled = true;
  try {
    const existing = await current();
    if (existing) {
      await send("DELETE", { endpoint: existing.endpoint });
      await existing.unsubscribe();
      say("This browser gets no more notifications.");
      return;
    }
    if ((await Notification.requestPermission()) !== "granted") {
      say("Notifications are blocked for this page in the browser's settings.");
      return;
    }
    const reg = await registration();
    await navigator.serviceWorker.ready;
    const sub = await reg.pushManager.subscribe({ userVisibleOnly: true, applicationServerKey: keyBytes(publicKey) });
    const json = sub.toJSON();
    const res = await send("POST", { endpoint: json.endpoint, keys: { p256dh: json.keys.p256dh, auth: json.keys.auth } });
    if (!res.ok) {
      await sub.unsubscribe();
      const body = await res.json().catch(() => null);
      say(`Not signed up: ${body?.message ?? `the box answered ${res.status}`}`);
      return;
    }
    say("This browser will show notifications for you while you are on call.");
  } catch (err) {
    say(`Not signed up: ${err.message}`);
  } finally {
    button.disabled = false;
    await render();
  }
}

async function init() {
  if (!supported) return;
  const res = await fetch("/api/push/key", { cache: "no-store" }).catch(() => null);
  if (res && res.ok) publicKey = (await res.json()).publicKey;
  $("push-button").addEventListener("click", toggle);
  onSessionChange(() => render());
  await render();
}

init();
