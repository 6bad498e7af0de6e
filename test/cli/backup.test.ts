// `millwarden backup`: a consistent copy of the historian while another connection holds it open
// and has rows in the write-ahead log that no checkpoint has moved into the main file yet.
import { spawnSync } from "node:child_process";
import { existsSync, readFileSync, statSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { Historian } from "../../src/store/historian.js";
import { tempDir } from "../integration/helpers.js";
import { T0, sample } from "../store/helpers.js";

const ROOT = join(import.meta.dirname, "../..");
const cli = (...args: string[]) => spawnSync(process.execPath, ["--import", "tsx", join(ROOT, "src/cli/main.ts"), ...args], { cwd: ROOT, encoding: "utf8", timeout: 30_000 });

describe("millwarden backup", { timeout: 60_000 }, () => {
  it("copies a live historian, WAL included, and never overwrites", () => {
    const dir = tempDir("mw-backup-");
    const db = join(dir.path, "millwarden.db");
    const live = Historian.open({ path: db });
    try {
      for (let i = 0; i < 600; i++) live.appendSample(sample("bf2.outlet.co", T0 + i * 1000, 40 + (i % 7)));
      live.flush();
      // The rows are committed in the -wal file; the daemon's connection stays open meanwhile.
      expect(statSync(`${db}-wal`).size).toBeGreaterThan(0);
      const expected = [...live.exportCsv(T0, T0 + 600_000)];
      expect(expected.length).toBe(601); // header and 600 rows

      const copy = join(dir.path, "copy.db");
      const r = cli("backup", "--from", db, "--to", copy);
      expect(r.stderr).toBe("");
      expect(r.status).toBe(0);
      expect(r.stdout).toMatch(/quick_check ok/);
      expect(existsSync(`${copy}.partial`)).toBe(false);
      const restored = Historian.open({ path: copy });
      try {
        expect([...restored.exportCsv(T0, T0 + 600_000)]).toEqual(expected);
      } finally {
        restored.close();
      }

      const again = cli("backup", "--from", db, "--to", copy);
      expect(again.status).toBe(1);
      expect(again.stderr).toMatch(/exists already/);

      // By the config: its storage.path is what is copied.
      const cfg = join(dir.path, "plant.yaml");
      writeFileSync(cfg, readTemplateWithPath(db));
      const byConfig = cli("backup", "--config", cfg, "--to", join(dir.path, "copy2.db"));
      expect(byConfig.stderr).toBe("");
      expect(byConfig.status).toBe(0);
    } finally {
      live.close();
      dir.remove();
    }
  });

  it("says what it needs", () => {
    const r = cli("backup", "--to", "/tmp/x.db");
    expect(r.status).toBe(1);
    expect(r.stderr).toMatch(/--config FILE .* or --from/);
  });
});

/** The plant template with its storage path pointed at `db`. */
function readTemplateWithPath(db: string): string {
  const text = readFileSync(join(ROOT, "config/plant-template.yaml"), "utf8");
  return text.replace("path: /var/lib/millwarden/millwarden.db", `path: ${db}`);
}
