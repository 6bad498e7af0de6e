// `millwarden check` as a user runs it: a summary and exit 0, or every error with
// file:line:column and exit 1.
import { spawnSync } from "node:child_process";
import { writeFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { tempDir } from "../integration/helpers.js";

const ROOT = join(import.meta.dirname, "../..");
const cli = (...args: string[]) =>
  spawnSync(process.execPath, ["--import", "tsx", join(ROOT, "src/cli/main.ts"), ...args], { cwd: ROOT, encoding: "utf8", timeout: 30_000 });

// Each test starts a fresh Node process with the TypeScript loader: seconds, not milliseconds.
describe("millwarden check", { timeout: 40_000 }, () => {
  it("summarises the demo config", () => {
    const r = cli("check", "--config", "config/demo.yaml");
    expect(r.stderr).toBe("");
    expect(r.status).toBe(0);
    expect(r.stdout).toMatch(/config\/demo\.yaml: valid/);
    expect(r.stdout).toMatch(/unit vm2 \(mill\).*LOC 15 % dry -> 13\.0 % with the NFPA 69 margin/);
    expect(r.stdout).toMatch(/rule co-gradient-bf2: co\.bf2-outlet\.gradientPpmPerMin >= caution 5, warning 15/);
  });

  it("reports a broken config with file:line and exit code 1", () => {
    const dir = tempDir("mw-check-");
    try {
      const file = join(dir.path, "broken.yaml");
      writeFileSync(file, "site:\n  name: X\n  plant: Y\n  barometricPressureHPa: 5000\nsources: []\nsignals: []\nunits: []\n");
      const r = cli("check", "--config", file);
      expect(r.status).toBe(1);
      expect(r.stderr).toContain(`${file}:4:`);
      expect(r.stderr).toMatch(/site\.barometricPressureHPa: .*1100/);
      expect(r.stderr).toMatch(/sources: .*expected array to have >=1 items/);
    } finally {
      dir.remove();
    }
  });

  it("needs --config", () => {
    const r = cli("check");
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/--config FILE is required/);
  });
});
