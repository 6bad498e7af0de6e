// Crash safety: a writer killed with SIGKILL in the middle of its work must leave a file that
// passes PRAGMA integrity_check ("ok" when no problem is found, sqlite.org/pragma.html#pragma_integrity_check)
// and holds every transaction it committed: SQLite transactions are atomic and, for a process
// crash (not a power loss), durable even with synchronous=NORMAL in WAL mode (sqlite.org/wal.html,
// sqlite.org/pragma.html#pragma_synchronous).
import { spawn } from "node:child_process";
import { existsSync } from "node:fs";
import { dirname, join, resolve } from "node:path";
import { fileURLToPath } from "node:url";
import Database from "better-sqlite3";
import { afterEach, beforeEach, describe, expect, it } from "vitest";
import { Historian } from "../../src/store/historian.js";
import { tempDir } from "./helpers.js";

const here = dirname(fileURLToPath(import.meta.url));
const repoRoot = resolve(here, "..", "..");
const writer = join(here, "fixtures", "crash-writer.ts");

let dir: string;
let cleanup: () => void;
beforeEach(() => {
  ({ dir, cleanup } = tempDir());
});
afterEach(() => cleanup());

type Totals = [samples: number, derived: number, transitions: number];

/**
 * Runs the writer, kills it runMs after its first commit, and returns the totals of the last
 * flush it reported done and of the flush it had begun (the same when killed between flushes).
 */
function runAndKill(path: string, runMs: number): Promise<{ flushed: Totals; begun: Totals; flushes: number }> {
  return new Promise((resolvePromise, reject) => {
    const child = spawn(process.execPath, ["--import", "tsx", writer, path], { cwd: repoRoot, stdio: ["ignore", "pipe", "pipe"] });
    let buf = "";
    let stderr = "";
    let flushed: Totals | null = null;
    let begun: Totals | null = null;
    let flushes = 0;
    let timer: NodeJS.Timeout | null = null;
    child.stdout.setEncoding("utf8");
    child.stdout.on("data", (chunk: string) => {
      buf += chunk;
      let nl: number;
      while ((nl = buf.indexOf("\n")) >= 0) {
        const line = buf.slice(0, nl);
        buf = buf.slice(nl + 1);
        const m = /^(begin|flushed) (\d+) (\d+) (\d+)$/.exec(line);
        if (!m) continue;
        const totals: Totals = [Number(m[2]), Number(m[3]), Number(m[4])];
        if (m[1] === "begin") begun = totals;
        else {
          flushed = totals;
          flushes++;
          timer ??= setTimeout(() => child.kill("SIGKILL"), runMs);
        }
      }
    });
    child.stderr.on("data", (c: Buffer) => (stderr += c.toString()));
    child.on("error", reject);
    child.on("exit", (code, signal) => {
      if (timer) clearTimeout(timer);
      if (signal !== "SIGKILL" || flushed === null || begun === null) {
        reject(new Error(`crash writer ended with code ${code}, signal ${signal}, before being killed; stderr: ${stderr}`));
      } else resolvePromise({ flushed, begun, flushes });
    });
  });
}

describe("Historian crash safety", () => {
  it("has tsx to run the writer", () => {
    expect(existsSync(join(repoRoot, "node_modules", "tsx"))).toBe(true);
  });

  for (let rep = 1; rep <= 5; rep++) {
    // Kill at different points of the writer's cycle of small flushes and bursts.
    const runMs = 700 + rep * 150;
    it(`keeps an intact file and exactly the committed transactions after SIGKILL (run ${rep} of 5, ${runMs} ms)`, async () => {
      const path = join(dir, "hist.db");
      const { flushed, begun, flushes } = await runAndKill(path, runMs);
      expect(flushes).toBeGreaterThan(5);

      const db = new Database(path);
      try {
        expect(db.pragma("integrity_check")).toEqual([{ integrity_check: "ok" }]);
        const count = (t: string): number => db.prepare(`SELECT count(*) FROM ${t}`).pluck().get() as number;
        const found: Totals = [count("samples"), count("derived"), count("advisory_transitions")];
        // All of the last reported flush, plus all or nothing of the one in progress.
        expect([flushed, begun]).toContainEqual(found);
      } finally {
        db.close();
      }

      // And the historian itself opens it again and reads it.
      const h = Historian.open({ path });
      try {
        expect(h.knownSignals()).toHaveLength(200);
        expect(h.samples("VM2-TT-100", Number.NEGATIVE_INFINITY, Number.POSITIVE_INFINITY).length).toBeGreaterThanOrEqual(flushed[0] / 200);
      } finally {
        h.close();
      }
    }, 30_000);
  }
});
