// The glance screen's line about notifications: a failing or silent channel, under the data
// panel, from /api/health's notifications field (read every 30 s; the live feed does not carry it).
import { notificationsLine } from "./notify-model.js";

const $ = (id) => document.getElementById(id);
const clock = (ms) => new Date(ms).toLocaleTimeString([], { hour: "2-digit", minute: "2-digit", hourCycle: "h23" });

async function refresh() {
  const line = $("notify-health");
  try {
    const res = await fetch("/api/health", { cache: "no-store" });
    // 503 is a degraded box: its body is the same health view.
    if (res.status !== 200 && res.status !== 503) return;
    const text = notificationsLine((await res.json()).notifications, clock);
    line.textContent = text ?? "";
    line.hidden = text === null;
  } catch {
    // The glance screen shows a lost connection already.
  }
}

refresh();
setInterval(refresh, 30_000);
