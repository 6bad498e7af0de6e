// GET /metrics: the Prometheus text exposition format (prometheus.io/docs/instrumenting/exposition_formats:
// "# HELP", "# TYPE", then `name{label="value"} number` lines), read from the daemon's counters.
import { describe, expect, it } from "vitest";
import { daemonMetrics, type MetricsInputs } from "../../src/daemon/metrics.js";
import type { AdvisoryView } from "../../src/core/types.js";
import type { HistorianStats } from "../../src/store/historian.js";

const historian = (over: Partial<HistorianStats> = {}): HistorianStats =>
  ({ state: "ok", queueDepth: 12, rowsWritten: 3400, droppedRows: 0, failedBatches: 1, ...over }) as HistorianStats;

function inputs(over: Partial<MetricsInputs> = {}): MetricsInputs {
  return {
    sources: () => [{ id: "plant-mqtt", kind: "mqtt", connected: true, samples: 1234, rejected: 3, rejectedBy: { "decode-error": 2, "not-a-number": 1 }, lastError: null }],
    rejectedByCore: () => ({ duplicate: 5 }),
    coreLagS: () => 0.25,
    historian: () => historian(),
    advisories: () => [{ tier: "caution", state: "unack" } as AdvisoryView, { tier: "caution", state: "unack" } as AdvisoryView, { tier: "warning", state: "ack" } as AdvisoryView],
    positions: () => ["control-room"],
    inFlood: () => false,
    ...over,
  };
}

const lines = async (i: MetricsInputs) => (await daemonMetrics(i).metrics()).split("\n");

describe("metrics", () => {
  it("exposes sources, core, historian and advisories in the text format", async () => {
    const l = await lines(inputs());
    expect(l).toContain("# TYPE millwarden_source_samples_total counter");
    expect(l).toContain('millwarden_source_connected{source="plant-mqtt",kind="mqtt"} 1');
    expect(l).toContain('millwarden_source_samples_total{source="plant-mqtt",kind="mqtt"} 1234');
    expect(l).toContain('millwarden_source_rejected_total{source="plant-mqtt",kind="mqtt",reason="decode-error"} 2');
    expect(l).toContain('millwarden_core_rejected_total{reason="duplicate"} 5');
    expect(l).toContain("millwarden_core_lag_seconds 0.25");
    expect(l).toContain("millwarden_historian_queue_depth 12");
    expect(l).toContain("millwarden_historian_rows_written_total 3400");
    expect(l).toContain("millwarden_historian_degraded 0");
    expect(l).toContain('millwarden_advisories{tier="caution",state="unack"} 2');
    expect(l).toContain('millwarden_advisories{tier="warning",state="ack"} 1');
    expect(l).toContain('millwarden_advisories{tier="notice",state="unack"} 0');
    expect(l).toContain('millwarden_advisory_flood{position="control-room"} 0');
  });

  it("reads the counters afresh at every scrape (no double counting)", async () => {
    let n = 10;
    const reg = daemonMetrics(inputs({ sources: () => [{ id: "s", kind: "mqtt", connected: false, samples: n, rejected: 0, rejectedBy: {}, lastError: "refused" }] }));
    expect((await reg.metrics()).split("\n")).toContain('millwarden_source_samples_total{source="s",kind="mqtt"} 10');
    n = 25;
    const again = (await reg.metrics()).split("\n");
    expect(again).toContain('millwarden_source_samples_total{source="s",kind="mqtt"} 25');
    expect(again).toContain('millwarden_source_connected{source="s",kind="mqtt"} 0');
  });

  it("a degraded historian and a flood show as 1; the data clock has no lag figure", async () => {
    const l = await lines(inputs({ historian: () => historian({ state: "degraded" }), inFlood: () => true, coreLagS: undefined }));
    expect(l).toContain("millwarden_historian_degraded 1");
    expect(l).toContain('millwarden_advisory_flood{position="control-room"} 1');
    expect(l.filter((x) => x.startsWith("millwarden_core_lag_seconds "))).toEqual([]);
  });
});

describe("notification metrics", () => {
  it("per channel: sent, dead, pending and failing (or silent)", async () => {
    const ch = (id: string, over: object) => ({ id, kind: "email", state: "ok", lastSuccessMs: 1, lastFailureMs: null, lastError: null, pending: 0, dead: 0, sent: 0, ...over });
    const l = await lines(
      inputs({
        notifications: () =>
          ({
            status: "failing",
            channels: [ch("mail", { sent: 12, pending: 2, dead: 1, state: "failing" }), ch("hook", { kind: "webhook", sent: 5, silent: true })],
            escalating: 0,
            outboxError: null,
            vapidPublicKey: null,
          }) as never,
      }),
    );
    expect(l).toContain('millwarden_notifications_sent_total{channel="mail",kind="email"} 12');
    expect(l).toContain('millwarden_notifications_dead_total{channel="mail",kind="email"} 1');
    expect(l).toContain('millwarden_notifications_pending{channel="mail",kind="email"} 2');
    expect(l).toContain('millwarden_notification_channel_failing{channel="mail",kind="email"} 1');
    expect(l).toContain('millwarden_notification_channel_failing{channel="hook",kind="webhook"} 1');
    expect(l).toContain('millwarden_notifications_sent_total{channel="hook",kind="webhook"} 5');
  });
});
