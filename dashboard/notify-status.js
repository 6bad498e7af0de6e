// The glance screen's lines about the box itself, under the data panel, from /api/health (read
// every 30 s; the live feed does not carry it): a degraded historian or a disconnected source,
// and a failing or silent notification channel.
import { boxHealthLine, notificationsLine } from "./notify-model.js";

const $ = (id) => document.getElementById(id);
const clock = (ms) => new Date(ms).toLocaleTimeString([], { hour: "2-digit", minute: "2-digit", hourCycle: "h23" });

async function refresh() {
  const line = $("notify-health");
  try {
    const res = await fetch("/api/health", { cache: "no-store" });
    // 503 is a degraded box: its body is the same health view.
    if (res.status !== 200 && res.status !== 503) return;
    const health = await res.json();
    const text = notificationsLine(health.notifications, clock);
    line.textContent = text ?? "";
    line.hidden = text === null;
    const box = $("box-health");
    const boxText = boxHealthLine(health);
    if (box) {
      box.textContent = boxText ?? "";
      box.hidden = boxText === null;
    }
  } catch {
    // The glance screen shows a lost connection already.
  }
}

refresh();
setInterval(refresh, 30_000);
