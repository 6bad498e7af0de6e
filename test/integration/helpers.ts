// Shared set-up for tests that run the real path: simulator -> broker -> daemon -> SQLite -> HTTP.
import { mkdtempSync, rmSync } from "node:fs";
import net from "node:net";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { loadConfig } from "../../src/config/load.js";
import type { MillwardenConfig } from "../../src/config/schema.js";
import { Daemon } from "../../src/daemon/daemon.js";
import { memoryLogger } from "../../src/daemon/log.js";

export const DEMO_CONFIG = join(import.meta.dirname, "../../config/demo.yaml");
const DEMO_PREFIX = "tarnholm/cg2/";

/** Is anything listening on this loopback port? */
export function listening(port: number, host = "127.0.0.1"): Promise<boolean> {
  return new Promise((ok) => {
    const s = net.connect({ port, host });
    s.once("connect", () => {
      s.destroy();
      ok(true);
    });
    s.once("error", () => ok(false));
  });
}

/** The demo config pointed at `brokerUrl`, on the data clock, with its own topic prefix and database. */
export function demoConfigFor(brokerUrl: string, topicPrefix: string, dataDir: string): MillwardenConfig {
  const base = loadConfig(DEMO_CONFIG);
  return {
    ...base,
    clock: "data",
    storage: { ...base.storage, path: join(dataDir, "millwarden.db") },
    server: { host: "127.0.0.1", port: 0, requireLoginForViews: false },
    sources: base.sources.map((s) => ({ ...s, url: brokerUrl, clientId: `mw-test-${process.pid}-${Math.random().toString(16).slice(2, 10)}` })),
    signals: base.signals.map((s) => ({ ...s, topic: s.topic!.replace(DEMO_PREFIX, `${topicPrefix}/`) })),
  };
}

export async function startTestDaemon(cfg: MillwardenConfig) {
  const log = memoryLogger();
  const daemon = await Daemon.start({ config: cfg, log });
  await Promise.all(daemon.sources.map((s) => s.whenReady()));
  return { daemon, log };
}

export function tempDir(prefix: string): { path: string; remove: () => void } {
  const path = mkdtempSync(join(tmpdir(), prefix));
  return { path, remove: () => rmSync(path, { recursive: true, force: true }) };
}

export async function waitFor(cond: () => boolean, timeoutMs: number, what: string): Promise<void> {
  const end = Date.now() + timeoutMs;
  while (!cond()) {
    if (Date.now() > end) throw new Error(`timed out after ${timeoutMs} ms waiting for ${what}`);
    await new Promise((r) => setTimeout(r, 50));
  }
}
