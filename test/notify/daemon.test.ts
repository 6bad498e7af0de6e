// The daemon with the demo config's notifications: none of its loopback receivers runs here, and
// the daemon still starts, ticks, shows each channel on /api/health and stops cleanly.
import { mkdtempSync, rmSync } from "node:fs";
import net from "node:net";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { loadConfig } from "../../src/config/load.js";
import { Daemon } from "../../src/daemon/daemon.js";
import { memoryLogger } from "../../src/daemon/log.js";
import type { HealthView } from "../../src/server/deps.js";
import { tr } from "./helpers.js";

const DEMO = join(import.meta.dirname, "../../config/demo.yaml");

/** A loopback port nobody listens on. */
function closedPort(): Promise<number> {
  return new Promise((ok) => {
    const s = net.createServer().listen(0, "127.0.0.1", () => {
      const p = (s.address() as net.AddressInfo).port;
      s.close(() => ok(p));
    });
  });
}

describe("the demo config's notifications with no receiver running", () => {
  let dir: string;
  let daemon: Daemon;
  const log = memoryLogger();
  const savedKey = process.env.MW_DEMO_WEBHOOK_KEY;
  beforeAll(async () => {
    delete process.env.MW_DEMO_WEBHOOK_KEY;
    dir = mkdtempSync(join(tmpdir(), "millwarden-notify-daemon-"));
    const base = loadConfig(DEMO);
    const port = await closedPort();
    daemon = await Daemon.start({
      config: {
        ...base,
        clock: "data",
        storage: { ...base.storage, path: join(dir, "millwarden.db") },
        server: { ...base.server, host: "127.0.0.1", port: 0 },
        sources: base.sources.map((s) => ({ ...s, url: `mqtt://127.0.0.1:${port}` })),
      },
      log,
    });
  });
  afterAll(async () => {
    await daemon?.stop();
    if (savedKey !== undefined) process.env.MW_DEMO_WEBHOOK_KEY = savedKey;
    rmSync(dir, { recursive: true, force: true });
  });

  it("starts, lists every channel on /api/health, and a failing channel never stops it", async () => {
    expect(daemon.notify).not.toBeNull();
    // A warning as the core would hand it over, then a tick: messages go to the outbox and are tried.
    // Tuesday 24 November 2026, 10:00 CET: week 46 of the demo rotation, Anna Berg primary.
    const t = Date.UTC(2026, 10, 24, 9);
    daemon.notify!.record([tr("o2-margin-vm2", "raise", t, { tier: "warning", value: 0.5, limit: 0 })], t);
    daemon.tick(t + 1000);
    await daemon.notify!.deliverNow();
    const res = await fetch(`${daemon.url}/api/health`);
    const health = (await res.json()) as HealthView;
    const n = health.notifications!;
    expect(n.channels.map((c) => `${c.id}:${c.kind}`)).toEqual(["mail:email", "hook:webhook", "broker:mqtt", "push:webpush"]);
    for (const c of n.channels) expect(["ok", "failing", "idle"]).toContain(c.state);
    // The webhook key is not in the environment: the channel says so, and its messages wait.
    expect(n.channels.find((c) => c.id === "hook")).toMatchObject({ state: "failing", lastError: expect.stringContaining("MW_DEMO_WEBHOOK_KEY"), pending: 1 });
    // Anna has no browser subscribed: that entry fails visibly, it is not retried.
    expect(n.channels.find((c) => c.id === "push")).toMatchObject({ state: "failing", dead: 1 });
    expect(n.status).toBe("failing");
    expect(n.vapidPublicKey).toMatch(/^[A-Za-z0-9_-]{87}$/);
    // The core goes on.
    daemon.tick(t + 2000);
    expect(daemon.coreNowMs).toBe(t + 2000);
    expect(log.lines.some((l) => l.includes('channel "hook" (webhook) cannot be used'))).toBe(true);
  });
});
