// Shared fixtures for the historian tests: temp folders and event builders (Tarnholm Works, line 2).
import { mkdtempSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import type { AdvisoryTransition, DerivedValue, Quality, Sample } from "../../src/core/types.js";

export function tempDir(): { dir: string; cleanup: () => void } {
  const dir = mkdtempSync(join(tmpdir(), "millwarden-historian-"));
  return { dir, cleanup: () => rmSync(dir, { recursive: true, force: true }) };
}

export function sample(signal: string, sourceTimeMs: number, value: number, quality: Quality = "good", receiveTimeMs = sourceTimeMs + 40): Sample {
  return { signal, value, quality, sourceTimeMs, receiveTimeMs };
}

export function derived(key: string, atMs: number, value: number | null, status: "ok" | "unknown" = value === null ? "unknown" : "ok"): DerivedValue {
  return { kind: "derived", key, atMs, value, status, ...(status === "unknown" ? { reason: "O2 analyser in function check" } : {}) };
}

export function transition(overrides: Partial<AdvisoryTransition> & Pick<AdvisoryTransition, "atMs">): AdvisoryTransition {
  return {
    kind: "advisory",
    advisoryId: "bf1.dewpoint-margin",
    ruleId: "bf1.dewpoint-margin",
    transition: "raise",
    from: "normal",
    to: "unack",
    tier: "caution",
    value: 14.2,
    limit: 15,
    by: "millwarden",
    why: "dew point margin at filter outlet 14.2 K below caution limit 15 K",
    ...overrides,
  };
}

/** Epoch ms of 2025-03-04T05:00:00Z, a shift at Tarnholm Works. */
export const T0 = Date.UTC(2025, 2, 4, 5, 0, 0);
