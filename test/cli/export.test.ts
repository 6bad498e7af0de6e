// `millwarden export` writes the stored history in the exchange format that replay reads,
// and the CSV reader reads back exactly what was stored.
import { spawnSync } from "node:child_process";
import { readFileSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { parseHistoryCsv } from "../../src/sources/csv.js";
import { Historian } from "../../src/store/historian.js";
import { tempDir } from "../integration/helpers.js";

const ROOT = join(import.meta.dirname, "../..");
const T0 = Date.UTC(2026, 10, 30, 6, 0, 0);

describe("millwarden export", { timeout: 40_000 }, () => {
  it("streams the chosen signals in the time range as time,signal,value,quality", () => {
    const dir = tempDir("mw-export-");
    try {
      const db = join(dir.path, "h.db");
      const h = Historian.open({ path: db });
      for (let k = 0; k < 120; k++) {
        h.appendSample({ signal: "bf2.outlet.co", value: 40 + k / 10, quality: k === 7 ? "uncertain" : "good", sourceTimeMs: T0 + k * 1000, receiveTimeMs: T0 + k * 1000 });
        h.appendSample({ signal: "vm2.outlet.co", value: 30, quality: "good", sourceTimeMs: T0 + k * 1000, receiveTimeMs: T0 + k * 1000 });
      }
      h.close();
      const cfg = join(dir.path, "plant.yaml");
      writeFileSync(cfg, readFileSync(join(ROOT, "config/demo.yaml"), "utf8").replace("path: data/demo/millwarden.db", `path: ${db}`));
      const r = spawnSync(
        process.execPath,
        ["--import", "tsx", join(ROOT, "src/cli/main.ts"), "export", "--config", cfg, "--from", new Date(T0 + 10_000).toISOString(), "--to", String(T0 + 19_000), "--signals", "bf2.outlet.co"],
        { cwd: ROOT, encoding: "utf8", timeout: 30_000 },
      );
      expect(r.stderr).toBe("");
      expect(r.status).toBe(0);
      const { samples } = parseHistoryCsv(r.stdout, "export.csv");
      expect(samples).toHaveLength(10);
      expect(samples.every((s) => s.signal === "bf2.outlet.co")).toBe(true);
      expect(samples[0]).toMatchObject({ sourceTimeMs: T0 + 10_000, value: 41, quality: "good" });
      expect(samples[9]!.value).toBeCloseTo(41.9, 12);
    } finally {
      dir.remove();
    }
  });

  it("refuses an unknown signal and a bad time with what it expected", () => {
    const run = (...a: string[]) => spawnSync(process.execPath, ["--import", "tsx", join(ROOT, "src/cli/main.ts"), "export", "--config", "config/demo.yaml", ...a], { cwd: ROOT, encoding: "utf8", timeout: 30_000 });
    expect(run("--from", "0", "--to", "1000", "--signals", "nope").stderr).toMatch(/unknown signal "nope"/);
    const bad = run("--from", "yesterday", "--to", "1000");
    expect(bad.status).toBe(2);
    expect(bad.stderr).toMatch(/--from expects RFC 3339 with Z or an offset, or epoch ms; found "yesterday"/);
  });
});
