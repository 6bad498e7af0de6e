// Faults that reach the core through the daemon without a broker fault: the box's clock jumping
// by an hour either way (injected `now` on the wall clock), and a burst of duplicate and
// out-of-order samples. The samples are the simulator's "purge-after-trip" hour (test/scenarios),
// which raises and clears advisories, so "advisories keep flowing" can be checked against the
// bare core on the same data.
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import type { MillwardenConfig } from "../../src/config/schema.js";
import type { Sample } from "../../src/core/types.js";
import { Daemon } from "../../src/daemon/daemon.js";
import { startEmbeddedBroker, type EmbeddedBroker } from "../../src/daemon/embedded-broker.js";
import { memoryLogger } from "../../src/daemon/log.js";
import { configOf, readScenarioSpec, runCore, simulatedSamples } from "../scenarios/harness.js";
import { demoConfigFor, tempDir } from "../integration/helpers.js";
import { repeatCount } from "./helpers.js";

let broker: EmbeddedBroker;
beforeAll(async () => {
  broker = await startEmbeddedBroker(0, "127.0.0.1");
});
afterAll(async () => {
  await broker.close();
});

const FOLDER = "purge-after-trip";
const HOUR_MS = 3_600_000;

function setup() {
  const spec = readScenarioSpec(FOLDER);
  const cfg = configOf(FOLDER, spec);
  return { cfg, samples: simulatedSamples(spec, cfg) };
}

async function daemonOn(rules: MillwardenConfig["rules"], dir: string, over: Partial<MillwardenConfig> = {}, now?: () => number) {
  const c = demoConfigFor(broker.url, `mw-faults/${process.pid}`, dir);
  return Daemon.start({ config: { ...c, rules, ...over }, log: memoryLogger(), serve: false, ...(now ? { now } : {}) });
}

/** The value of one Prometheus sample line, e.g. millwarden_core_rejected_total{reason="duplicate"}. */
function metric(text: string, name: string, labels: string): number {
  const line = text.split("\n").find((l) => l.startsWith(`${name}{${labels}}`));
  return line === undefined ? 0 : Number(line.slice(line.lastIndexOf(" ") + 1));
}

describe("box clock jumps by an hour (wall clock, injected now)", { timeout: 60_000 }, () => {
  it("the core keeps computing, advisories keep flowing, nothing throws", async () => {
    const { cfg, samples } = setup();
    const core = runCore(cfg, samples);
    const dir = tempDir("mw-fault-clock-");
    // The plant stamps its samples with its own clock (smooth); the box's clock jumps:
    // +1 h at a quarter of the hour, back at the half, -1 h at three quarters.
    const t0 = samples[0]!.sourceTimeMs;
    const offsetAt = (sourceMs: number) => {
      const q = (sourceMs - t0) / (samples.at(-1)!.sourceTimeMs - t0);
      return q < 0.25 ? 0 : q < 0.5 ? HOUR_MS : q < 0.75 ? 0 : -HOUR_MS;
    };
    let boxNowMs = t0;
    const d = await daemonOn(cfg.rules, dir.path, { clock: "wall" }, () => boxNowMs);
    try {
      const perSegment = [0, 0, 0, 0];
      const trusted = [0, 0, 0, 0];
      let lastTickMs: number | null = null;
      for (const s of samples) {
        boxNowMs = s.sourceTimeMs + offsetAt(s.sourceTimeMs);
        // What the daemon's one-second timer does on the wall clock (driven here so the hour runs in a second).
        const second = Math.floor(boxNowMs / 1000) * 1000;
        if (second !== lastTickMs) {
          expect(() => d.tick(second)).not.toThrow();
          lastTickMs = second;
        }
        expect(() => d.ingest({ ...s, receiveTimeMs: boxNowMs })).not.toThrow();
        const seg = Math.min(3, Math.floor(((s.sourceTimeMs - t0) / (samples.at(-1)!.sourceTimeMs - t0)) * 4));
        // Trust follows the receive time: right after a jump the signals are fresh again within a second.
        const snap = d.engine.snapshot();
        if (snap.signals.every((x) => !x.stale)) trusted[seg]!++;
      }
      d.historian.flush();
      const raises = d.historian.transitions().filter((t) => t.transition === "raise");
      for (const t of d.historian.transitions()) {
        // Tick times are the box's: map them back to the plant's quarter by the offset in force.
        for (const off of [0, HOUR_MS, -HOUR_MS]) {
          const q = (t.atMs - off - t0) / (samples.at(-1)!.sourceTimeMs - t0);
          if (offsetAt(t.atMs - off) === off && q >= 0 && q <= 1) {
            perSegment[Math.min(3, Math.floor(q * 4))]!++;
            break;
          }
        }
      }
      const coreRaised = [...new Set(core.transitions.filter((t) => t.transition === "raise").map((t) => t.advisoryId))].sort();
      console.info(`clock jump: transitions per quarter ${perSegment.join(" / ")}; samples with every signal fresh per quarter ${trusted.join(" / ")}; raised ${[...new Set(raises.map((r) => r.advisoryId))].sort().join(", ")} (bare core: ${coreRaised.join(", ")})`);
      expect(coreRaised.length).toBeGreaterThan(0);
      // Every advisory the bare core raises on the plant's data is raised by the jumped daemon too.
      expect([...new Set(raises.map((r) => r.advisoryId))].sort()).toEqual(expect.arrayContaining(coreRaised));
      // The core computed in every quarter: most samples saw every signal trusted.
      const perQuarter = samples.length / 4;
      for (const n of trusted) expect(n).toBeGreaterThan(perQuarter * 0.9);
      // After the last jump the core's time is the box's (an hour behind the plant's).
      expect(d.coreNowMs).toBe(Math.floor((samples.at(-1)!.sourceTimeMs - HOUR_MS) / 1000) * 1000);
      expect(d.engine.snapshot().dewPoints.some((p) => p.marginK !== null)).toBe(true);
    } finally {
      await d.stop();
      dir.remove();
    }
  });
});

describe("a burst of duplicate and out-of-order samples", { timeout: 60_000 }, () => {
  it("is counted as refused, nothing is stored twice, and the core is as without the burst", async () => {
    const { cfg, samples } = setup();
    const upTo = samples.filter((s) => s.sourceTimeMs < samples[0]!.sourceTimeMs + 20 * 60_000);
    const bursts = repeatCount(3);
    const dirA = tempDir("mw-fault-dup-a-");
    const dirB = tempDir("mw-fault-dup-b-");
    const clean = await daemonOn(cfg.rules, dirA.path);
    const noisy = await daemonOn(cfg.rules, dirB.path);
    try {
      let duplicates = 0;
      let outOfOrder = 0;
      const every = Math.floor(upTo.length / (bursts + 1));
      const bySignal = new Map<string, Sample[]>();
      upTo.forEach((s, i) => {
        clean.ingest({ ...s });
        noisy.ingest({ ...s });
        const seen = bySignal.get(s.signal) ?? [];
        seen.push(s);
        bySignal.set(s.signal, seen);
        if (i > 0 && i % every === 0) {
          // The burst: every signal's last sample again (duplicate), then its one before, and one a minute old (out of order).
          for (const list of bySignal.values()) {
            noisy.ingest({ ...list.at(-1)! });
            duplicates++;
            for (const old of [list.at(-2), list.at(-60)]) {
              if (old) {
                noisy.ingest({ ...old, value: old.value + 1 });
                outOfOrder++;
              }
            }
          }
        }
      });
      const text = (await noisy.appDeps().metrics!()).body;
      const refusedDup = metric(text, "millwarden_core_rejected_total", 'reason="duplicate"');
      const refusedOld = metric(text, "millwarden_core_rejected_total", 'reason="out-of-order"');
      console.info(`duplicates: ${bursts} bursts, ${duplicates} duplicates and ${outOfOrder} out-of-order samples sent; refused ${refusedDup} / ${refusedOld}`);
      expect(duplicates).toBeGreaterThan(0);
      expect(refusedDup).toBe(duplicates);
      expect(refusedOld).toBe(outOfOrder);
      clean.historian.flush();
      noisy.historian.flush();
      const from = upTo[0]!.sourceTimeMs;
      const to = upTo.at(-1)!.sourceTimeMs;
      for (const id of bySignal.keys()) {
        const stored = noisy.historian.samples(id, from, to);
        expect(stored.length, `samples of ${id} stored`).toBe(bySignal.get(id)!.length);
        expect(new Set(stored.map((p) => p.tMs)).size, `distinct times of ${id}`).toBe(stored.length);
        expect(stored).toEqual(clean.historian.samples(id, from, to));
      }
      expect(noisy.engine.snapshot()).toEqual(clean.engine.snapshot());
      expect(noisy.historian.transitions()).toEqual(clean.historian.transitions());
    } finally {
      await clean.stop();
      await noisy.stop();
      dirA.remove();
      dirB.remove();
    }
  });
});
