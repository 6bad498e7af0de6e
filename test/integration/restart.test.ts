// The daemon around the core: fed the samples a scenario gives, it raises exactly the transitions
// the bare core raises (replay and live share one core), and after a restart on the same
// historian an acknowledged advisory comes back acknowledged and does not ring again.
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import type { MillwardenConfig } from "../../src/config/schema.js";
import type { Sample } from "../../src/core/types.js";
import { Daemon } from "../../src/daemon/daemon.js";
import { startEmbeddedBroker, type EmbeddedBroker } from "../../src/daemon/embedded-broker.js";
import { memoryLogger } from "../../src/daemon/log.js";
import { configOf, readScenarioSpec, runCore, simulatedSamples } from "../scenarios/harness.js";
import { demoConfigFor, tempDir } from "./helpers.js";

let broker: EmbeddedBroker;
beforeAll(async () => {
  broker = await startEmbeddedBroker(0, "127.0.0.1");
});
afterAll(async () => {
  await broker.close();
});

const FOLDER = "purge-after-trip";

function setup() {
  const spec = readScenarioSpec(FOLDER);
  const cfg = configOf(FOLDER, spec);
  const samples = simulatedSamples(spec, cfg);
  return { cfg, samples };
}

async function daemonOn(cfg: MillwardenConfig, dir: string) {
  const c = demoConfigFor(broker.url, `mw-restart/${process.pid}`, dir);
  return Daemon.start({ config: { ...c, rules: cfg.rules }, log: memoryLogger(), serve: false });
}

const feed = (d: Daemon, samples: readonly Sample[]) => {
  for (const s of samples) d.ingest({ ...s });
};

describe("daemon and core agree", () => {
  it("the same samples give the same transitions at the same times", async () => {
    const { cfg, samples } = setup();
    const core = runCore(cfg, samples);
    const dir = tempDir("mw-restart-");
    const d = await daemonOn(cfg, dir.path);
    try {
      feed(d, samples);
      d.tick(Math.floor(samples.at(-1)!.sourceTimeMs / 1000) * 1000);
      d.historian.flush();
      expect(core.transitions.length).toBeGreaterThan(3);
      // The historian keeps an endless time to a limit (+Infinity) as NULL (src/core/types.ts).
      const stored = core.transitions.map((t) => ({ ...t, value: t.value !== null && Number.isFinite(t.value) ? t.value : null }));
      expect(d.historian.transitions()).toEqual(stored);
    } finally {
      await d.stop();
      dir.remove();
    }
  });
});

describe("restart", () => {
  it("restores acknowledgements: the advisory is not raised again", async () => {
    const { cfg, samples } = setup();
    const dir = tempDir("mw-restart-");
    try {
      const first = await daemonOn(cfg, dir.path);
      // Up to the first raise of the mill O2 margin, then acknowledge it.
      const core = runCore(cfg, samples);
      const raise = core.transitions.find((t) => t.advisoryId === "o2-margin-vm2" && t.transition === "raise")!;
      const upTo = samples.filter((s) => s.sourceTimeMs <= raise.atMs + 1000);
      feed(first, upTo);
      const ack = first.appDeps().command("o2-margin-vm2", "ack", { by: "m.leitstand", role: "operator", note: "purge running" });
      expect(ack).toMatchObject({ ok: true, advisory: { state: "ack" } });
      await first.stop();

      const second = await daemonOn(cfg, dir.path);
      try {
        expect(second.engine.currentAdvisories().find((a) => a.id === "o2-margin-vm2")).toMatchObject({ state: "ack", ackedBy: "m.leitstand" });
        const before = second.historian.transitions({ advisoryId: "o2-margin-vm2" }).length;
        // The next minutes of the same data: the margin stays low; no new raise.
        feed(second, samples.filter((s) => s.sourceTimeMs > raise.atMs + 1000 && s.sourceTimeMs <= raise.atMs + 30_000));
        second.historian.flush();
        const after = second.historian.transitions({ advisoryId: "o2-margin-vm2" }).slice(before);
        expect(after.filter((t) => t.transition === "raise")).toEqual([]);
      } finally {
        await second.stop();
      }
    } finally {
      dir.remove();
    }
  });
});

describe("warm start", () => {
  it("after a restart the CO gradients and baselines carry on from history, as if there had been no restart", async () => {
    const { cfg, samples } = setup();
    const t0 = samples[0]!.sourceTimeMs;
    const cutMs = t0 + 30 * 60_000;
    const endMs = t0 + 40 * 60_000;
    const keys = ["co.bf2-outlet.gradientPpmPerMin", "co.bf2-outlet.baselinePpm", "co.vm2-outlet.gradientLongPpmPerMin", "dewpoint.bf2-outlet.marginTrendKPerMin"];
    const valuesAt = (d: Daemon, tMs: number) => {
      d.historian.flush();
      return keys.map((k) => d.historian.derived(k, tMs, tMs)[0]?.value ?? null);
    };

    const dirA = tempDir("mw-warm-");
    const dirB = tempDir("mw-warm-");
    try {
      const straight = await daemonOn(cfg, dirA.path);
      feed(straight, samples.filter((s) => s.sourceTimeMs <= endMs));
      const want = valuesAt(straight, endMs - 1000);
      await straight.stop();

      const first = await daemonOn(cfg, dirB.path);
      feed(first, samples.filter((s) => s.sourceTimeMs <= cutMs));
      await first.stop();
      const second = await daemonOn(cfg, dirB.path);
      try {
        // Right after the restart, before any new sample, the gradient is known (not blind).
        const snap = second.engine.snapshot();
        expect(snap.coPoints.find((p) => p.id === "bf2-outlet")!.gradientPpmPerMin).not.toBeNull();
        feed(second, samples.filter((s) => s.sourceTimeMs > cutMs && s.sourceTimeMs <= endMs));
        expect(want.every((v) => v !== null)).toBe(true);
        expect(valuesAt(second, endMs - 1000)).toEqual(want);
      } finally {
        await second.stop();
      }
    } finally {
      dirA.remove();
      dirB.remove();
    }
  });
});

describe("data clock, data older than the stored history", () => {
  it("starts the core afresh instead of standing still, and raises what a fresh core raises", async () => {
    const { cfg, samples } = setup();
    const dir = tempDir("mw-older-");
    try {
      // Yesterday's run stored a later day (the same data a day on) in this file.
      const later = await daemonOn(cfg, dir.path);
      feed(later, samples.map((s) => ({ ...s, sourceTimeMs: s.sourceTimeMs + 86_400_000, receiveTimeMs: s.receiveTimeMs + 86_400_000 })));
      await later.stop();
      const d = await daemonOn(cfg, dir.path);
      try {
        feed(d, samples);
        const lastMs = Math.floor(samples.at(-1)!.sourceTimeMs / 1000) * 1000;
        expect(d.coreNowMs).toBe(lastMs);
        d.tick(lastMs);
        const core = runCore(cfg, samples);
        const raisedHere = d.historian.transitions({ fromMs: samples[0]!.sourceTimeMs, toMs: lastMs }).filter((t) => t.transition === "raise");
        expect(raisedHere.map((t) => [t.advisoryId, t.atMs])).toEqual(core.transitions.filter((t) => t.transition === "raise").map((t) => [t.advisoryId, t.atMs]));
      } finally {
        await d.stop();
      }
    } finally {
      dir.remove();
    }
  });
});

