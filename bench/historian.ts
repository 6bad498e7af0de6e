// Historian write throughput beside bare better-sqlite3 in the same run, and bytes on disk per sample.
//
//   npx tsx bench/historian.ts [--signals 1000] [--seconds 300] [--runs 3]
//
// Each case writes `signals × seconds` rows, the signals interleaved (one value of every signal
// per second, as a plant delivers them), into a fresh file in a temporary folder, then closes it
// (the WAL is checkpointed into the file) and measures the file. "B/row written" counts every
// byte written (WAL frames, then the checkpoint into the file). Figures are medians over runs.
// It prints numbers only; nothing here asserts a speed.
import { mkdtempSync, readFileSync, rmSync, statSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import Database from "better-sqlite3";
import { Historian } from "../src/store/historian.js";

function arg(name: string, dflt: number): number {
  const i = process.argv.indexOf(`--${name}`);
  if (i < 0) return dflt;
  const v = Number(process.argv[i + 1]);
  if (!Number.isSafeInteger(v) || v < 1) throw new Error(`--${name}: expected a whole number ≥ 1, found "${process.argv[i + 1] ?? ""}"`);
  return v;
}

const SIGNALS = arg("signals", 1000);
const SECONDS = arg("seconds", 300);
const RUNS = arg("runs", 3);
const ROWS = SIGNALS * SECONDS;
const T0 = Date.UTC(2025, 2, 4, 5, 0, 0);
const names = Array.from({ length: SIGNALS }, (_, i) => `VM2-XT-${String(i).padStart(4, "0")}`);
const valueAt = (s: number, sec: number): number => 50 + 10 * Math.sin(sec / 60 + s);

interface Result {
  rowsPerS: number;
  bytesPerRow: number;
  /** Bytes handed to write() per row (WAL frames and checkpoints): the wear on an edge box's flash. */
  writtenPerRow: number;
}

/** Bytes this process has passed to write() so far (Linux /proc/self/io "wchar"); NaN elsewhere. */
function wcharBytes(): number {
  try {
    const m = /^wchar: (\d+)$/m.exec(readFileSync("/proc/self/io", "utf8"));
    return m ? Number(m[1]) : Number.NaN;
  } catch {
    return Number.NaN;
  }
}

function fileBytes(path: string): number {
  let n = 0;
  for (const f of [path, `${path}-wal`, `${path}-shm`]) {
    try {
      n += statSync(f).size;
    } catch {
      // absent after a clean close
    }
  }
  return n;
}

function historianCase(dir: string, rowsPerFlush: number): Result {
  const path = join(dir, `historian-${rowsPerFlush}.db`);
  const h = Historian.open({ path, maxBatchRows: rowsPerFlush, maxQueueRows: rowsPerFlush * 2 });
  let queued = 0;
  const w = wcharBytes();
  const t = process.hrtime.bigint();
  for (let sec = 0; sec < SECONDS; sec++) {
    const tMs = T0 + sec * 1000;
    for (let s = 0; s < SIGNALS; s++) {
      h.appendSample({ signal: names[s] as string, value: valueAt(s, sec), quality: "good", sourceTimeMs: tMs, receiveTimeMs: tMs + 35 });
      if (++queued === rowsPerFlush) {
        h.flush();
        queued = 0;
      }
    }
  }
  h.flush();
  const s = Number(process.hrtime.bigint() - t) / 1e9;
  const st = h.stats();
  if (st.rowsWritten !== ROWS || st.state !== "ok") throw new Error(`historian wrote ${st.rowsWritten} of ${ROWS} rows (${st.lastError ?? "no error"})`);
  h.close();
  return { rowsPerS: ROWS / s, bytesPerRow: fileBytes(path) / ROWS, writtenPerRow: (wcharBytes() - w) / ROWS };
}

function bareCase(dir: string, rowsPerTxn: number, layout: "without-rowid" | "rowid-no-index"): Result {
  const path = join(dir, `bare-${layout}-${rowsPerTxn}.db`);
  const db = new Database(path);
  db.pragma("journal_mode = WAL");
  db.pragma("synchronous = NORMAL");
  db.exec(
    layout === "without-rowid"
      ? "CREATE TABLE s (signal_id INTEGER NOT NULL, t_ms INTEGER NOT NULL, value REAL, quality INTEGER NOT NULL, recv_ms INTEGER NOT NULL, PRIMARY KEY (signal_id, t_ms)) WITHOUT ROWID"
      : "CREATE TABLE s (signal_id INTEGER NOT NULL, t_ms INTEGER NOT NULL, value REAL, quality INTEGER NOT NULL, recv_ms INTEGER NOT NULL)",
  );
  const ins = db.prepare("INSERT INTO s VALUES (?, ?, ?, ?, ?)");
  const write = db.transaction((from: number, to: number) => {
    for (let i = from; i < to; i++) {
      const sec = Math.floor(i / SIGNALS);
      const sig = i % SIGNALS;
      const tMs = T0 + sec * 1000;
      ins.run(sig + 1, tMs, valueAt(sig, sec), 0, tMs + 35);
    }
  });
  const w = wcharBytes();
  const t = process.hrtime.bigint();
  for (let i = 0; i < ROWS; i += rowsPerTxn) write(i, Math.min(ROWS, i + rowsPerTxn));
  const s = Number(process.hrtime.bigint() - t) / 1e9;
  db.close();
  return { rowsPerS: ROWS / s, bytesPerRow: fileBytes(path) / ROWS, writtenPerRow: (wcharBytes() - w) / ROWS };
}

function appendOnlyNsPerSample(dir: string): number {
  const h = Historian.open({ path: join(dir, "append-only.db"), maxQueueRows: ROWS });
  const t = process.hrtime.bigint();
  for (let sec = 0; sec < SECONDS; sec++) {
    const tMs = T0 + sec * 1000;
    for (let s = 0; s < SIGNALS; s++) h.appendSample({ signal: names[s] as string, value: valueAt(s, sec), quality: "good", sourceTimeMs: tMs, receiveTimeMs: tMs + 35 });
  }
  const ns = Number(process.hrtime.bigint() - t) / ROWS;
  h.close();
  return ns;
}

const median = (xs: number[]): number => {
  const s = [...xs].sort((a, b) => a - b);
  const m = Math.floor(s.length / 2);
  return s.length % 2 ? (s[m] as number) : ((s[m - 1] as number) + (s[m] as number)) / 2;
};

const cases: { name: string; rowsPerTxn: number; run: (dir: string) => Result }[] = [
  { name: "historian appendSample + flush", rowsPerTxn: 1000, run: (d) => historianCase(d, 1000) },
  { name: "historian appendSample + flush", rowsPerTxn: 5000, run: (d) => historianCase(d, 5000) },
  { name: "historian appendSample + flush", rowsPerTxn: 20_000, run: (d) => historianCase(d, 20_000) },
  { name: "bare better-sqlite3, WITHOUT ROWID (signal, t)", rowsPerTxn: 1000, run: (d) => bareCase(d, 1000, "without-rowid") },
  { name: "bare better-sqlite3, WITHOUT ROWID (signal, t)", rowsPerTxn: 5000, run: (d) => bareCase(d, 5000, "without-rowid") },
  { name: "bare better-sqlite3, WITHOUT ROWID (signal, t)", rowsPerTxn: 20_000, run: (d) => bareCase(d, 20_000, "without-rowid") },
  { name: "bare better-sqlite3, rowid table, no index", rowsPerTxn: 5000, run: (d) => bareCase(d, 5000, "rowid-no-index") },
];

const results = cases.map(() => [] as Result[]);
const appendNs: number[] = [];
for (let r = 0; r < RUNS; r++) {
  const dir = mkdtempSync(join(tmpdir(), "millwarden-bench-historian-"));
  try {
    // Interleave the cases within each run so that machine noise spreads over all of them.
    cases.forEach((c, i) => results[i]?.push(c.run(dir)));
    appendNs.push(appendOnlyNsPerSample(dir));
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

console.log(`historian write benchmark: ${SIGNALS} signals interleaved × ${SECONDS} s = ${ROWS.toLocaleString("en")} rows per case; WAL, synchronous NORMAL; median of ${RUNS} runs`);
console.log(`Node ${process.version}, SQLite ${(new Database(":memory:").prepare("SELECT sqlite_version()").pluck().get() as string)}`);
console.log("");
const pad = (s: string, n: number): string => s.padEnd(n);
const lpad = (s: string, n: number): string => s.padStart(n);
console.log(`${pad("case", 48)} ${lpad("rows/txn", 8)} ${lpad("rows/s", 10)} ${lpad("B/row on disk", 13)} ${lpad("B/row written", 13)}`);
cases.forEach((c, i) => {
  const rs = results[i] ?? [];
  const rate = median(rs.map((x) => x.rowsPerS));
  const bytes = median(rs.map((x) => x.bytesPerRow));
  const written = median(rs.map((x) => x.writtenPerRow));
  console.log(
    `${pad(c.name, 48)} ${lpad(String(c.rowsPerTxn), 8)} ${lpad(Math.round(rate).toLocaleString("en"), 10)} ${lpad(bytes.toFixed(1), 13)} ${lpad(written.toFixed(0), 13)}`,
  );
});
console.log("");
console.log(`appendSample alone (enqueue, no flush): ${median(appendNs).toFixed(0)} ns per sample`);
