// The delivery log page: GET /api/notifications/deliveries (engineer, admin; the session of the
// glance screen's login), read again every 30 s, and the notifications line of /api/health.
import { deliveryRows, notificationsLine } from "./notify-model.js";

const $ = (id) => document.getElementById(id);
const clock = (ms) => new Date(ms).toLocaleString([], { dateStyle: "short", timeStyle: "medium" });

function cell(text) {
  const td = document.createElement("td");
  td.textContent = text;
  return td;
}

async function refresh() {
  // Asked first, so that the page does not fetch what it may not see (the browser would log each refusal).
  const session = await fetch("/api/session", { cache: "no-store" }).then((r) => r.json());
  if (!session.user) {
    $("deliveries-status").textContent = "Log in on the glance screen first (engineer or admin), then reload this page.";
    return;
  }
  if (session.role !== "engineer" && session.role !== "admin") {
    $("deliveries-status").textContent = `The delivery log is for engineers and admins; ${session.user} is logged in as ${session.role}.`;
    return;
  }
  const res = await fetch("/api/notifications/deliveries?limit=200", { cache: "no-store" });
  if (!res.ok) {
    const body = await res.json().catch(() => null);
    $("deliveries-status").textContent = body?.message ?? `the box answered ${res.status}`;
    return;
  }
  const rows = deliveryRows((await res.json()).deliveries, clock);
  const tbody = $("deliveries-rows");
  tbody.replaceChildren(
    ...rows.map((r) => {
      const tr = document.createElement("tr");
      if (r.abnormal) tr.className = "abnormal";
      tr.append(cell(r.time), cell(r.channel), cell(r.recipient), cell(r.what), cell(r.attempt), cell(r.outcome), cell(r.error), cell(r.durationMs));
      return tr;
    }),
  );
  $("deliveries-table").hidden = rows.length === 0;
  $("deliveries-status").textContent = rows.length === 0 ? "No delivery has been attempted yet." : `${rows.length} most recent attempts.`;
  const health = await fetch("/api/health", { cache: "no-store" }).then((r) => r.json()).catch(() => null);
  $("deliveries-health").textContent = (health && notificationsLine(health.notifications, clock)) ?? "notifications: every channel delivers.";
}

refresh().catch((err) => ($("deliveries-status").textContent = `The box could not be reached (${err.message}).`));
setInterval(() => refresh().catch(() => undefined), 30_000);
