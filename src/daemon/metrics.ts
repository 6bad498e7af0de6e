// GET /metrics in the Prometheus text exposition format (prom-client): what an OT team's
// monitoring watches on the box. Every figure is read at scrape time from the daemon's own
// counters, so the hot path does no extra work for it.
//
//   millwarden_source_connected{source,kind}                       1 / 0
//   millwarden_source_samples_total{source,kind}                   decoded samples handed to the core
//   millwarden_source_rejected_total{source,kind,reason}           messages refused, by reason
//   millwarden_core_rejected_total{reason}                         samples the core refused (duplicate, out of order, unknown)
//   millwarden_core_lag_seconds                                    wall clock minus the core's last tick (live clock)
//   millwarden_historian_degraded, _queue_depth, _rows_written_total, _rows_dropped_total, _failed_batches_total
//   millwarden_advisories{tier,state}                              advisories on screen
//   millwarden_advisory_flood{position}                            1 while an operator position is in flood
//   millwarden_notifications_sent_total, _dead_total, _pending, millwarden_notification_channel_failing {channel,kind}
import { Counter, Gauge, Registry } from "prom-client";
import type { AdvisoryView } from "../core/types.js";
import type { HistorianStats } from "../store/historian.js";
import type { SourceStats } from "../sources/mqtt.js";
import type { NotificationsHealth } from "../server/deps.js";

export interface MetricsInputs {
  sources(): SourceStats[];
  rejectedByCore(): Record<string, number>;
  /** Seconds the core is behind the wall clock; absent on the data clock, where it means nothing. */
  coreLagS?: () => number;
  historian(): HistorianStats;
  advisories(): AdvisoryView[];
  positions(): string[];
  inFlood(position: string): boolean;
  /** The notification channels, when the config has notifications. */
  notifications?: () => NotificationsHealth;
}

/** A registry whose collectors read `inputs` at every scrape. */
export function daemonMetrics(inputs: MetricsInputs): Registry {
  const registry = new Registry();
  const reg = { registers: [registry] };

  // Counters that only mirror counts kept elsewhere: reset and set to the current totals at scrape.
  const mirror = (c: Counter<string>, labels: Record<string, string>, total: number) => {
    c.inc(labels, total);
  };

  new Gauge({
    name: "millwarden_source_connected",
    help: "Whether the source is connected and subscribed (1) or not (0).",
    labelNames: ["source", "kind"],
    registers: [registry],
    collect() {
      this.reset();
      for (const s of inputs.sources()) this.set({ source: s.id, kind: s.kind }, s.connected ? 1 : 0);
    },
  });
  new Counter({
    name: "millwarden_source_samples_total",
    help: "Samples decoded from the source and handed to the core.",
    labelNames: ["source", "kind"],
    ...reg,
    collect() {
      this.reset();
      for (const s of inputs.sources()) mirror(this, { source: s.id, kind: s.kind }, s.samples);
    },
  });
  new Counter({
    name: "millwarden_source_rejected_total",
    help: "Messages the source refused, by reason (decode error, not a number, clock skew, ...).",
    labelNames: ["source", "kind", "reason"],
    ...reg,
    collect() {
      this.reset();
      for (const s of inputs.sources()) for (const [reason, n] of Object.entries(s.rejectedBy)) mirror(this, { source: s.id, kind: s.kind, reason }, n);
    },
  });
  new Counter({
    name: "millwarden_core_rejected_total",
    help: "Samples the core refused: duplicates, out of order, unknown signals.",
    labelNames: ["reason"],
    ...reg,
    collect() {
      this.reset();
      for (const [reason, n] of Object.entries(inputs.rejectedByCore())) mirror(this, { reason }, n);
    },
  });
  const lag = inputs.coreLagS;
  if (lag)
    new Gauge({
      name: "millwarden_core_lag_seconds",
      help: "Wall clock minus the time of the core's last tick (live clock only).",
      ...reg,
      collect() {
        this.set(lag());
      },
    });
  const hist = (name: string, help: string, read: (h: HistorianStats) => number, kind: "gauge" | "counter") => {
    const opts = { name, help, ...reg };
    if (kind === "gauge")
      new Gauge({
        ...opts,
        collect() {
          this.set(read(inputs.historian()));
        },
      });
    else
      new Counter({
        ...opts,
        collect() {
          this.reset();
          this.inc(read(inputs.historian()));
        },
      });
  };
  hist("millwarden_historian_degraded", "1 while the historian cannot write (full disk, I/O error); the core goes on.", (h) => (h.state === "degraded" ? 1 : 0), "gauge");
  hist("millwarden_historian_queue_depth", "Rows waiting in memory to be written.", (h) => h.queueDepth, "gauge");
  hist("millwarden_historian_rows_written_total", "Rows committed since start.", (h) => h.rowsWritten, "counter");
  hist("millwarden_historian_rows_dropped_total", "Rows dropped because the write queue was full.", (h) => h.droppedRows, "counter");
  hist("millwarden_historian_failed_batches_total", "Write batches that failed since start.", (h) => h.failedBatches, "counter");
  new Gauge({
    name: "millwarden_advisories",
    help: "Advisories on screen, by tier and ISA-18.2 state.",
    labelNames: ["tier", "state"],
    ...reg,
    collect() {
      this.reset();
      const counts = new Map<string, { tier: string; state: string; n: number }>();
      for (const a of inputs.advisories()) {
        const k = `${a.tier}/${a.state}`;
        const c = counts.get(k) ?? { tier: a.tier, state: a.state, n: 0 };
        c.n++;
        counts.set(k, c);
      }
      for (const tier of ["notice", "caution", "warning"]) this.set({ tier, state: "unack" }, 0);
      for (const c of counts.values()) this.set({ tier: c.tier, state: c.state }, c.n);
    },
  });
  new Gauge({
    name: "millwarden_advisory_flood",
    help: "1 while the operator position is in an advisory flood (more than 10 in 10 minutes by default).",
    labelNames: ["position"],
    ...reg,
    collect() {
      this.reset();
      for (const p of inputs.positions()) this.set({ position: p }, inputs.inFlood(p) ? 1 : 0);
    },
  });
  const notes = inputs.notifications;
  if (notes) {
    const perChannel = (name: string, help: string, read: (c: NotificationsHealth["channels"][number]) => number, kind: "gauge" | "counter") => {
      const opts = { name, help, labelNames: ["channel", "kind"], ...reg };
      const fill = (m: { reset(): void; set?(l: object, v: number): void; inc?(l: object, v: number): void }) => {
        m.reset();
        for (const c of notes().channels) {
          const labels = { channel: c.id, kind: c.kind };
          if (m.set) m.set(labels, read(c));
          else m.inc!(labels, read(c));
        }
      };
      if (kind === "gauge")
        new Gauge({
          ...opts,
          collect() {
            fill(this as never);
          },
        });
      else
        new Counter({
          ...opts,
          collect() {
            fill(this as never);
          },
        });
    };
    perChannel("millwarden_notifications_sent_total", "Notifications delivered, per channel.", (c) => c.sent ?? 0, "counter");
    perChannel("millwarden_notifications_dead_total", "Notifications given up on after their retries, per channel.", (c) => c.dead, "counter");
    perChannel("millwarden_notifications_pending", "Notifications waiting for a first or a further attempt, per channel.", (c) => c.pending, "gauge");
    perChannel("millwarden_notification_channel_failing", "1 while the channel's last attempt failed or it cannot be used (or is silent past its daily test).", (c) => (c.state === "failing" || c.silent ? 1 : 0), "gauge");
  }
  return registry;
}
