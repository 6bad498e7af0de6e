// Pure helpers for the notification pieces of the dashboard: the glance screen's line about
// failing or silent channels, and the rows of the delivery log page. Tested in
// test/server/notify-model.test.ts.

/**
 * The line under the data panel, or null when every channel is fine.
 * "notifications: mail failing since 21:40 — <reason>"; "push silent: no delivery since 06:00 yesterday".
 * @param {import("../src/server/deps.js").NotificationsHealth | undefined} n
 * @param {(ms: number) => string} clock how a time is written (the browser's locale)
 * @returns {string | null}
 */
export function notificationsLine(n, clock) {
  if (!n) return null;
  const parts = [];
  for (const c of n.channels) {
    if (c.state === "failing") {
      const since = typeof c.failingSinceMs === "number" ? `since ${clock(c.failingSinceMs)}` : "";
      parts.push(`${c.id} failing${since ? ` ${since}` : ""}${c.lastError ? ` \u2014 ${c.lastError}` : ""}`);
    } else if (c.silent) {
      parts.push(`${c.id} silent: ${c.lastSuccessMs === null ? "no delivery yet" : `nothing delivered since ${clock(c.lastSuccessMs)}`} (its daily test is missing)`);
    }
  }
  if (n.outboxError) parts.push(`the outbox refuses messages \u2014 ${n.outboxError}`);
  return parts.length ? `notifications: ${parts.join("; ")}` : null;
}

/**
 * The box's own trouble, for the line under the data panel, or null when all is well:
 * "this box: historian degraded — <error>; source plant-mqtt not connected — <error>".
 * (Notifications have their own line, notificationsLine.)
 * @param {import("../src/server/deps.js").HealthView | undefined} h
 * @returns {string | null}
 */
export function boxHealthLine(h) {
  if (!h) return null;
  const parts = [];
  if (h.historian?.state === "degraded") parts.push(`historian degraded (computing and advisories go on, history is not being written)${h.historian.lastError ? ` \u2014 ${h.historian.lastError}` : ""}`);
  for (const s of h.sources ?? []) if (!s.connected) parts.push(`source ${s.id} not connected${s.lastError ? ` \u2014 ${s.lastError}` : ""}`);
  return parts.length ? `this box: ${parts.join("; ")}` : null;
}

/**
 * The delivery log's rows as texts, newest first.
 * @param {{ atMs: number, channel: string, recipient: string, kind: string, tier: string | null, advisoryId: string | null, attempt: number, outcome: string, error: string | null, durationMs: number, entryState: string }[]} rows
 * @param {(ms: number) => string} clock
 */
export function deliveryRows(rows, clock) {
  return rows.map((r) => ({
    time: clock(r.atMs),
    channel: r.channel,
    recipient: r.recipient.replace(/^person:/, "").replace(/#.*$/, " (a browser)"),
    what: [r.tier, r.kind, r.advisoryId].filter((x) => x).join(" "),
    attempt: String(r.attempt),
    outcome: r.outcome === "sent" ? "sent" : r.outcome === "dead" ? "given up" : "failed, will retry",
    error: r.error ?? "",
    durationMs: `${r.durationMs} ms`,
    abnormal: r.outcome !== "sent",
  }));
}
