// The dashboard's notification texts (dashboard/notify-model.js): the glance screen's line about
// a failing or silent channel, and the delivery log's rows. Hand-built health views.
import { describe, expect, it } from "vitest";
import { deliveryRows, notificationsLine } from "../../dashboard/notify-model.js";
import type { NotificationsHealth } from "../../src/server/deps.js";

const T = Date.UTC(2026, 0, 6, 20, 40);
const clock = (ms: number) => new Date(ms).toISOString().slice(11, 16);

function health(channels: Partial<NotificationsHealth["channels"][number]>[], outboxError: string | null = null): NotificationsHealth {
  return {
    status: "ok",
    escalating: 0,
    outboxError,
    vapidPublicKey: null,
    channels: channels.map((c) => ({ id: "mail", kind: "email", state: "ok", lastSuccessMs: null, lastFailureMs: null, lastError: null, pending: 0, dead: 0, ...c })),
  };
}

describe("notificationsLine", () => {
  it("nothing to say when every channel delivers, or without notifications", () => {
    expect(notificationsLine(undefined, clock)).toBeNull();
    expect(notificationsLine(health([{ state: "ok", lastSuccessMs: T }, { id: "push", state: "idle" }]), clock)).toBeNull();
  });

  it("a failing channel: since its first failure after the last success, with the reason", () => {
    const h = health([{ state: "failing", lastSuccessMs: T - 3600_000, lastFailureMs: T + 600_000, failingSinceMs: T, lastError: "connect ECONNREFUSED (smtp 127.0.0.1:25)" }]);
    expect(notificationsLine(h, clock)).toBe("notifications: mail failing since 20:40 \u2014 connect ECONNREFUSED (smtp 127.0.0.1:25)");
  });

  it("a silent channel (its daily test missing) and a refusing outbox", () => {
    const h = health([{ id: "push", kind: "webpush", state: "ok", lastSuccessMs: T - 27 * 3600_000, silent: true }], "database is locked");
    expect(notificationsLine(h, clock)).toBe("notifications: push silent: nothing delivered since 17:40 (its daily test is missing); the outbox refuses messages \u2014 database is locked");
  });
});

describe("deliveryRows", () => {
  it("names the person (a browser without its endpoint), the advisory and the outcome in words", () => {
    const rows = deliveryRows(
      [
        { atMs: T, channel: "push", recipient: "person:anna#1a2b3c4d5e6f7a8b", kind: "advisory", tier: "warning", advisoryId: "o2-high-vm2", attempt: 2, outcome: "retry", error: "HTTP 503", durationMs: 41, entryState: "failed" },
        { atMs: T, channel: "mail", recipient: "person:jonas", kind: "test", tier: null, advisoryId: null, attempt: 1, outcome: "sent", error: null, durationMs: 12, entryState: "sent" },
      ],
      clock,
    );
    expect(rows[0]).toMatchObject({ recipient: "anna (a browser)", what: "warning advisory o2-high-vm2", outcome: "failed, will retry", abnormal: true, durationMs: "41 ms" });
    expect(rows[1]).toMatchObject({ recipient: "jonas", what: "test", outcome: "sent", abnormal: false, error: "" });
  });
});

describe("boxHealthLine", () => {
  it("says nothing when all is well, and names a degraded historian and each disconnected source", async () => {
    const { boxHealthLine } = await import("../../dashboard/notify-model.js");
    const ok = { status: "ok", sources: [{ id: "plant-mqtt", kind: "mqtt", connected: true, samples: 1, rejected: 0, lastError: null }], historian: { state: "ok", queueDepth: 0, rowsWritten: 1, lastError: null } };
    expect(boxHealthLine(ok as never)).toBeNull();
    expect(boxHealthLine(undefined)).toBeNull();
    const bad = { ...ok, historian: { ...ok.historian, state: "degraded", lastError: "SQLITE_FULL: database or disk is full" }, sources: [{ ...ok.sources[0], connected: false, lastError: "connect ECONNREFUSED 127.0.0.1:1883" }] };
    expect(boxHealthLine(bad as never)).toBe(
      "this box: historian degraded (computing and advisories go on, history is not being written) \u2014 SQLITE_FULL: database or disk is full; source plant-mqtt not connected \u2014 connect ECONNREFUSED 127.0.0.1:1883",
    );
  });
});
