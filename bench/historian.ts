// Historian benchmarks beside bare better-sqlite3 measured in the same run. Numbers only;
// nothing here asserts a speed.
//
//   npx tsx bench/historian.ts [--signals 1000] [--seconds 300] [--runs 3] [--only write,size,trend,year]
//
// write  Each case writes `signals × seconds` rows, the signals interleaved (one value of
//        every signal per second, as a plant delivers them), into a fresh file, then closes
//        it (the WAL is checkpointed into the file) and measures it. "B/row written" counts
//        every byte handed to write() (WAL frames, then the checkpoint): the wear on an edge
//        box's flash. The "with sealing" case calls maintain() every 300 s of data, as the
//        daemon would, so its rate includes compressing. Medians over runs.
// size   Bytes on disk per raw sample after sealing, on the simulated plant (Tarnholm Works
//        line 2, "demo" scenario, 80 min): 11 runs with different noise seeds give 198
//        signals. Beside: the same rows as plain (signal, t, value, quality) tables.
// trend  24 h of 8 signals at 1 Hz (18 demo runs back to back, 8 of the tags), then the time
//        to serve trend() for all 8, from a cold connection and warm; beside: a plain SELECT of
//        the 86,400 rows and a 1-minute GROUP BY per signal on a WITHOUT ROWID table.
// year   The file after a year at 200 signals with the default retention (raw 30 days,
//        roll-ups 365 days), in a reduced form on a fake clock, extrapolated (see there).
import { mkdtempSync, readFileSync, rmSync, statSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import Database from "better-sqlite3";
import { createScenario } from "../src/sim/plant.js";
import { Historian } from "../src/store/historian.js";
import { wholeArg } from "./args.js";

const arg = wholeArg;
const onlyArg = process.argv.indexOf("--only");
const ONLY = new Set(onlyArg >= 0 ? (process.argv[onlyArg + 1] ?? "").split(",") : ["write", "size", "trend", "year"]);
for (const o of ONLY) if (!["write", "size", "trend", "year"].includes(o)) throw new Error(`--only: expected some of write,size,trend,year, found "${o}"`);

const SIGNALS = arg("signals", 1000);
const SECONDS = arg("seconds", 300);
const RUNS = arg("runs", 3);
const ROWS = SIGNALS * SECONDS;
const T0 = Date.UTC(2025, 2, 4, 5, 0, 0);
const MIN = 60_000;
const DAY = 86_400_000;
const names = Array.from({ length: SIGNALS }, (_, i) => `VM2-XT-${String(i).padStart(4, "0")}`);
const valueAt = (s: number, sec: number): number => 50 + 10 * Math.sin(sec / 60 + s);

const median = (xs: number[]): number => {
  const s = [...xs].sort((a, b) => a - b);
  const m = Math.floor(s.length / 2);
  return s.length % 2 ? (s[m] as number) : ((s[m - 1] as number) + (s[m] as number)) / 2;
};
const fmt = (n: number): string => Math.round(n).toLocaleString("en");
const pad = (s: string, n: number): string => s.padEnd(n);
const lpad = (s: string, n: number): string => s.padStart(n);
const ms = (t: bigint): number => Number(process.hrtime.bigint() - t) / 1e6;
const cpuS = (c: NodeJS.CpuUsage): number => {
  const d = process.cpuUsage(c);
  return (d.user + d.system) / 1e6;
};

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

/** Bytes of each table and index (with its overflow pages), from SQLite's dbstat table. */
function tableBytes(path: string): Map<string, number> {
  const db = new Database(path, { readonly: true });
  try {
    const rows = db.prepare("SELECT name, sum(pgsize) AS b FROM dbstat GROUP BY name").all() as { name: string; b: number }[];
    return new Map(rows.map((r) => [r.name, r.b]));
  } finally {
    db.close();
  }
}

const tmpRoot = mkdtempSync(join(tmpdir(), "millwarden-bench-historian-"));
process.on("exit", () => rmSync(tmpRoot, { recursive: true, force: true }));
let caseNo = 0;
const freshPath = (name: string): string => join(tmpRoot, `${caseNo++}-${name}.db`);

console.log(`Node ${process.version}, SQLite ${new Database(":memory:").prepare("SELECT sqlite_version()").pluck().get() as string}`);

// ---------------------------------------------------------------- write
interface WriteResult {
  rowsPerS: number;
  /** Rows per second of this process's CPU time (user + system): the rate on one core, whatever else the machine runs. */
  rowsPerCpuS: number;
  bytesPerRow: number;
  writtenPerRow: number;
}

function historianWrite(rowsPerFlush: number, seal: boolean): WriteResult {
  const path = freshPath(`historian-${rowsPerFlush}`);
  const h = Historian.open({ path, maxBatchRows: rowsPerFlush, maxQueueRows: rowsPerFlush * 2 });
  let queued = 0;
  const w = wcharBytes();
  const c = process.cpuUsage();
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
    if (seal && sec % 300 === 299) h.maintain(tMs + 60_000);
  }
  h.flush();
  if (seal) h.maintain(T0 + SECONDS * 1000 + 600_000); // 300 s after the last seal: seals the rest
  const s = ms(t) / 1000;
  const cs = cpuS(c);
  const st = h.stats();
  if (st.rowsWritten !== ROWS || st.state !== "ok") throw new Error(`historian wrote ${st.rowsWritten} of ${ROWS} rows (${st.lastError ?? "no error"})`);
  if (seal && st.sealedRows !== ROWS) throw new Error(`historian sealed ${st.sealedRows} of ${ROWS} rows`);
  h.close();
  return { rowsPerS: ROWS / s, rowsPerCpuS: ROWS / cs, bytesPerRow: fileBytes(path) / ROWS, writtenPerRow: (wcharBytes() - w) / ROWS };
}

function bareWrite(rowsPerTxn: number, layout: "without-rowid" | "rowid-no-index"): WriteResult {
  const path = freshPath(`bare-${layout}-${rowsPerTxn}`);
  const db = new Database(path);
  db.pragma("journal_mode = WAL");
  db.pragma("synchronous = NORMAL");
  db.exec(
    layout === "without-rowid"
      ? "CREATE TABLE s (signal_id INTEGER NOT NULL, t_ms INTEGER NOT NULL, value REAL, quality INTEGER NOT NULL, PRIMARY KEY (signal_id, t_ms)) WITHOUT ROWID"
      : "CREATE TABLE s (signal_id INTEGER NOT NULL, t_ms INTEGER NOT NULL, value REAL, quality INTEGER NOT NULL)",
  );
  const ins = db.prepare("INSERT INTO s VALUES (?, ?, ?, ?)");
  const write = db.transaction((from: number, to: number) => {
    for (let i = from; i < to; i++) {
      const sec = Math.floor(i / SIGNALS);
      const sig = i % SIGNALS;
      ins.run(sig + 1, T0 + sec * 1000, valueAt(sig, sec), 0);
    }
  });
  const w = wcharBytes();
  const c = process.cpuUsage();
  const t = process.hrtime.bigint();
  for (let i = 0; i < ROWS; i += rowsPerTxn) write(i, Math.min(ROWS, i + rowsPerTxn));
  const s = ms(t) / 1000;
  const cs = cpuS(c);
  db.close();
  return { rowsPerS: ROWS / s, rowsPerCpuS: ROWS / cs, bytesPerRow: fileBytes(path) / ROWS, writtenPerRow: (wcharBytes() - w) / ROWS };
}

function appendOnlyNsPerSample(): number {
  const h = Historian.open({ path: freshPath("append-only"), maxQueueRows: ROWS });
  const t = process.hrtime.bigint();
  for (let sec = 0; sec < SECONDS; sec++) {
    const tMs = T0 + sec * 1000;
    for (let s = 0; s < SIGNALS; s++) h.appendSample({ signal: names[s] as string, value: valueAt(s, sec), quality: "good", sourceTimeMs: tMs, receiveTimeMs: tMs + 35 });
  }
  const ns = (ms(t) * 1e6) / ROWS;
  h.close();
  return ns;
}

if (ONLY.has("write")) {
  const cases: { name: string; rowsPerTxn: number; run: () => WriteResult }[] = [
    { name: "historian appendSample + flush", rowsPerTxn: 1000, run: () => historianWrite(1000, false) },
    { name: "historian appendSample + flush", rowsPerTxn: 5000, run: () => historianWrite(5000, false) },
    { name: "historian appendSample + flush", rowsPerTxn: 20_000, run: () => historianWrite(20_000, false) },
    { name: "historian + flush + maintain (sealing)", rowsPerTxn: 5000, run: () => historianWrite(5000, true) },
    { name: "bare better-sqlite3, WITHOUT ROWID (signal, t)", rowsPerTxn: 1000, run: () => bareWrite(1000, "without-rowid") },
    { name: "bare better-sqlite3, WITHOUT ROWID (signal, t)", rowsPerTxn: 5000, run: () => bareWrite(5000, "without-rowid") },
    { name: "bare better-sqlite3, WITHOUT ROWID (signal, t)", rowsPerTxn: 20_000, run: () => bareWrite(20_000, "without-rowid") },
    { name: "bare better-sqlite3, rowid table, no index", rowsPerTxn: 5000, run: () => bareWrite(5000, "rowid-no-index") },
  ];
  const results = cases.map(() => [] as WriteResult[]);
  const appendNs: number[] = [];
  for (let r = 0; r < RUNS; r++) {
    // Interleave the cases within each run so that machine noise spreads over all of them.
    cases.forEach((c, i) => results[i]?.push(c.run()));
    appendNs.push(appendOnlyNsPerSample());
  }
  console.log(`\n== write: ${SIGNALS} signals interleaved × ${SECONDS} s = ${fmt(ROWS)} rows per case; WAL, synchronous NORMAL; median of ${RUNS} runs`);
  console.log(`${pad("case", 48)} ${lpad("rows/txn", 8)} ${lpad("rows/s", 10)} ${lpad("rows/CPU-s", 10)} ${lpad("B/row on disk", 13)} ${lpad("B/row written", 13)}`);
  cases.forEach((c, i) => {
    const rs = results[i] ?? [];
    console.log(
      `${pad(c.name, 48)} ${lpad(String(c.rowsPerTxn), 8)} ${lpad(fmt(median(rs.map((x) => x.rowsPerS))), 10)} ${lpad(fmt(median(rs.map((x) => x.rowsPerCpuS))), 10)} ${lpad(median(rs.map((x) => x.bytesPerRow)).toFixed(1), 13)} ${lpad(median(rs.map((x) => x.writtenPerRow)).toFixed(0), 13)}`,
    );
  });
  console.log("rows/CPU-s: rows per second of this process's CPU time, the rate on one core whatever else the machine runs. The sealing case's file is the sealed one.");
  console.log(`appendSample alone (enqueue, no flush): ${median(appendNs).toFixed(0)} ns per sample`);
}

// ---------------------------------------------------------------- simulated plant data

/** Tag values of one demo run: tag → 4800 values at 1 Hz. */
function demoRun(seed: number): Map<string, number[]> {
  const sc = createScenario("demo", { startTimeMs: T0, seed });
  const out = new Map<string, number[]>();
  for (let f = sc.next(); f !== null; f = sc.next()) {
    for (const { tag, value } of f.values) {
      let a = out.get(tag);
      if (a === undefined) out.set(tag, (a = []));
      a.push(value);
    }
  }
  return out;
}

const demoRuns = new Map<number, Map<string, number[]>>();
const demo = (seed: number): Map<string, number[]> => {
  let r = demoRuns.get(seed);
  if (r === undefined) demoRuns.set(seed, (r = demoRun(seed)));
  return r;
};

// ---------------------------------------------------------------- size
let sizeFigures: { chunkBPerSample: number; rollupBPerRow: number; plainBPerRow: number } | null = null;

function sizeCase(): void {
  const seeds = Array.from({ length: 11 }, (_, i) => i + 1);
  const series: { name: string; values: number[] }[] = [];
  for (const seed of seeds) for (const [tag, values] of demo(seed)) series.push({ name: `${tag}#${seed}`, values });
  const seconds = (series[0] as { values: number[] }).values.length;
  const samples = series.length * seconds;

  const path = freshPath("size");
  const h = Historian.open({ path });
  const c0 = process.cpuUsage();
  const t = process.hrtime.bigint();
  for (let s = 0; s < seconds; s++) {
    const tMs = T0 + s * 1000;
    for (const x of series) h.appendSample({ signal: x.name, value: x.values[s] as number, quality: "good", sourceTimeMs: tMs, receiveTimeMs: tMs });
    if (s % 300 === 299) h.maintain(tMs + 60_000);
  }
  h.maintain(T0 + seconds * 1000 + 600_000); // 300 s after the last seal: seals the rest
  const writeS = ms(t) / 1000;
  const writeCpuS = cpuS(c0);
  const st = h.stats();
  if (st.recentRows !== 0 || st.sealedRows !== samples) throw new Error(`size: ${st.sealedRows} of ${samples} sealed, ${st.recentRows} left`);
  h.vacuum(); // drop the free pages the recent rows left, to measure what the data takes
  h.close();
  const tb = tableBytes(path);
  const chunkBytes = (tb.get("chunks") ?? 0) + (tb.get("chunks_series_last") ?? 0) + (tb.get("chunks_last") ?? 0);
  const rollupBytes = tb.get("rollups_1m") ?? 0;
  const db = new Database(path, { readonly: true });
  const payload = db.prepare("SELECT sum(length(data) + coalesce(length(quality), 0)) FROM chunks").pluck().get() as number;
  const formats = db.prepare("SELECT substr(data, 1, 1) AS f, count(*) AS n FROM chunks GROUP BY f").all() as { f: Buffer; n: number }[];
  const rollupRows = db.prepare("SELECT count(*) FROM rollups_1m").pluck().get() as number;
  db.close();

  // The same rows, plain: WITHOUT ROWID (signal, t) and a rowid table without index.
  const plain = (layout: "without-rowid" | "rowid"): number => {
    const p = freshPath(`plain-${layout}`);
    const d = new Database(p);
    d.pragma("journal_mode = WAL");
    d.exec(
      layout === "without-rowid"
        ? "CREATE TABLE s (signal_id INTEGER NOT NULL, t_ms INTEGER NOT NULL, value REAL, quality INTEGER NOT NULL, PRIMARY KEY (signal_id, t_ms)) WITHOUT ROWID"
        : "CREATE TABLE s (signal_id INTEGER NOT NULL, t_ms INTEGER NOT NULL, value REAL, quality INTEGER NOT NULL)",
    );
    const ins = d.prepare("INSERT INTO s VALUES (?, ?, ?, ?)");
    d.transaction(() => {
      for (let s = 0; s < seconds; s++) series.forEach((x, i) => ins.run(i + 1, T0 + s * 1000, x.values[s] as number, 0));
    })();
    d.exec("VACUUM");
    d.close();
    return fileBytes(p) / samples;
  };
  const plainWr = plain("without-rowid");
  const plainRowid = plain("rowid");
  sizeFigures = { chunkBPerSample: chunkBytes / samples, rollupBPerRow: rollupBytes / rollupRows, plainBPerRow: plainWr };
  const fmtCounts = formats.map((f) => `format ${f.f[0]}: ${f.n}`).join(", ");
  console.log(`\n== size: demo scenario, ${series.length} signals × ${seconds} s = ${fmt(samples)} samples, sealed every 300 s (${fmtCounts} chunks)`);
  console.log(`historian, whole file after sealing and VACUUM      ${(fileBytes(path) / samples).toFixed(2)} B/sample (${(fileBytes(path) / 1e6).toFixed(1)} MB)`);
  console.log(`  chunks with their indexes                         ${(chunkBytes / samples).toFixed(2)} B/sample (compressed payload alone ${(payload / samples).toFixed(2)})`);
  console.log(`  1-minute roll-ups                                 ${(rollupBytes / samples).toFixed(2)} B/sample = ${(rollupBytes / rollupRows).toFixed(1)} B per roll-up row`);
  console.log(`bare better-sqlite3, WITHOUT ROWID (signal, t) rows  ${plainWr.toFixed(2)} B/sample`);
  console.log(`bare better-sqlite3, rowid table, no index           ${plainRowid.toFixed(2)} B/sample`);
  console.log(`writing and sealing it took ${writeS.toFixed(1)} s (${fmt(samples / writeS)} samples/s), ${writeCpuS.toFixed(1)} s of CPU (${fmt(samples / writeCpuS)} samples/CPU-s)`);
}

// ---------------------------------------------------------------- trend
function trendCase(): void {
  // 18 demo runs of 80 min back to back: 24 h; 8 of the tags.
  const tags = ["VM2-TT-111", "VM2-AT-113", "VM2-AT-114", "BF2-TT-211", "BF2-AT-213", "BF2-AT-214", "BF2-AT-215", "FS2-AT-314"];
  const values = new Map(tags.map((tag) => [tag, [] as number[]]));
  for (let seed = 1; seed <= 18; seed++) for (const tag of tags) values.get(tag)?.push(...(demo(seed).get(tag) ?? []));
  const seconds = (values.get(tags[0] as string) as number[]).length;
  const path = freshPath("trend");
  const h = Historian.open({ path });
  for (let s = 0; s < seconds; s++) {
    const tMs = T0 + s * 1000;
    for (const tag of tags) h.appendSample({ signal: tag, value: (values.get(tag) as number[])[s] as number, quality: "good", sourceTimeMs: tMs, receiveTimeMs: tMs });
    if (s % 300 === 299) h.maintain(tMs + 60_000);
  }
  h.maintain(T0 + seconds * 1000 + 600_000);
  h.close();
  const from = T0;
  const to = T0 + seconds * 1000 - 1;

  const timeTrend = (points: number, cold: boolean): { ms: number; cpuMs: number; source: string; n: number } => {
    const hh = Historian.open({ path });
    if (!cold) for (const tag of tags) hh.trend(tag, from, to, points);
    const c = process.cpuUsage();
    const t = process.hrtime.bigint();
    let n = 0;
    let source = "";
    for (const tag of tags) {
      const r = hh.trend(tag, from, to, points);
      n += r.points.length;
      source = r.source;
    }
    const took = ms(t);
    const cpuMs = cpuS(c) * 1000;
    hh.close();
    return { ms: took, cpuMs, source, n };
  };
  const reps = 5;
  const rows: [string, number[], number[], string][] = [];
  for (const [label, points, cold] of [
    ["trend(), 1000 points each, cold connection", 1000, true],
    ["trend(), 1000 points each, warm", 1000, false],
    ["trend(), 8640 points each (raw + LTTB), cold", 8640, true],
    ["trend(), 8640 points each (raw + LTTB), warm", 8640, false],
  ] as const) {
    const runs = Array.from({ length: reps }, () => timeTrend(points, cold));
    rows.push([label, runs.map((r) => r.ms), runs.map((r) => r.cpuMs), `${runs[0]?.source}, ${runs[0]?.n} points`]);
  }

  // Bare: the same 8 × 86,400 rows in a WITHOUT ROWID (signal, t) table.
  const bp = freshPath("trend-bare");
  const d = new Database(bp);
  d.pragma("journal_mode = WAL");
  d.exec("CREATE TABLE s (signal_id INTEGER NOT NULL, t_ms INTEGER NOT NULL, value REAL, quality INTEGER NOT NULL, PRIMARY KEY (signal_id, t_ms)) WITHOUT ROWID");
  const ins = d.prepare("INSERT INTO s VALUES (?, ?, ?, ?)");
  d.transaction(() => {
    for (let s = 0; s < seconds; s++) tags.forEach((tag, i) => ins.run(i + 1, T0 + s * 1000, (values.get(tag) as number[])[s] as number, 0));
  })();
  d.close();
  const bare = (sql: string): [number[], number[]] => {
    const wall: number[] = [];
    const cpu: number[] = [];
    for (let r = 0; r < reps; r++) {
      const db = new Database(bp, { readonly: true });
      const st = db.prepare(sql).raw();
      const c = process.cpuUsage();
      const t = process.hrtime.bigint();
      for (let i = 1; i <= tags.length; i++) st.all(i, from, to);
      wall.push(ms(t));
      cpu.push(cpuS(c) * 1000);
      db.close();
    }
    return [wall, cpu];
  };
  rows.push(["bare SELECT t, value of 86,400 rows, cold", ...bare("SELECT t_ms, value FROM s WHERE signal_id = ? AND t_ms BETWEEN ? AND ?"), "8 × 86,400 rows"]);
  rows.push([
    "bare 1-minute min/avg/max GROUP BY, cold",
    ...bare("SELECT t_ms / 60000, min(value), avg(value), max(value) FROM s WHERE signal_id = ? AND t_ms BETWEEN ? AND ? GROUP BY t_ms / 60000"),
    "8 × 1440 rows",
  ]);
  console.log(`\n== trend: 24 h of 8 signals at 1 Hz (${fmt(seconds * tags.length)} samples), all 8 served; median of ${reps}; wall and CPU time`);
  for (const [label, wall, cpu, what] of rows) console.log(`${pad(label, 50)} ${lpad(median(wall).toFixed(1), 7)} ms ${lpad(median(cpu).toFixed(1), 7)} ms CPU  (${what})`);
}

// ---------------------------------------------------------------- year
function yearCase(): void {
  // Reduced form: 4 signals at one sample a minute for 365 days on a fake clock, with
  // maintain() once per simulated hour and the default retention. A roll-up row is one per
  // signal and minute whatever the sample rate, so the roll-ups here have the real density;
  // the raw part (30 days) is 1/60 of the real one and is scaled from the size case's
  // bytes per sealed sample instead.
  const signals = 4;
  const days = 365;
  const path = freshPath("year");
  const h = Historian.open({ path });
  const t = process.hrtime.bigint();
  let peakFile = 0;
  for (let m = 0; m < days * 1440; m++) {
    const tMs = T0 + m * MIN;
    for (let s = 0; s < signals; s++) h.appendSample({ signal: `VM2-XT-${s}`, value: Math.round((60 + 10 * Math.sin(m / 300 + s)) * 100) / 100, quality: "good", sourceTimeMs: tMs, receiveTimeMs: tMs });
    if (m % 60 === 59) {
      h.maintain(tMs + MIN);
      if (m % (60 * 24 * 30) === 59) peakFile = Math.max(peakFile, h.stats().fileBytes ?? 0);
    }
  }
  const took = ms(t) / 1000;
  const st = h.stats();
  h.close();
  const tb = tableBytes(path);
  const db = new Database(path, { readonly: true });
  const rawFirst = db.prepare("SELECT min(t_first_ms) FROM chunks").pluck().get() as number;
  const rollupRows = db.prepare("SELECT count(*) FROM rollups_1m").pluck().get() as number;
  const rollupFirst = db.prepare("SELECT min(t_minute_ms) FROM rollups_1m").pluck().get() as number;
  db.close();
  const nowMs = T0 + days * DAY;
  const rollupBPerRow = (tb.get("rollups_1m") ?? 0) / rollupRows;
  console.log(`\n== year: ${signals} signals, 1 sample/min, ${days} days on a fake clock (maintain hourly), default retention; ${took.toFixed(1)} s`);
  console.log(`reduced file: ${(fileBytes(path) / 1e6).toFixed(1)} MB; raw kept from ${((nowMs - rawFirst) / DAY).toFixed(2)} days back, roll-ups from ${((nowMs - rollupFirst) / DAY).toFixed(1)} days back (${fmt(rollupRows)} rows, ${rollupBPerRow.toFixed(1)} B each); pruned ${fmt(st.prunedChunks)} chunks`);
  const chunkB = sizeFigures?.chunkBPerSample;
  const plainB = sizeFigures?.plainBPerRow;
  if (chunkB === undefined || plainB === undefined) {
    console.log("(run with the size case to extrapolate to 200 signals at 1 Hz)");
    return;
  }
  // Extrapolation: 200 signals at 1 Hz; raw = 30 days × 86,400 samples × chunk B/sample (from
  // the size case, demo-like signals); roll-ups = 365 days × 1,440 rows × B/row measured here.
  const rawSamples = 200 * 30 * 86_400;
  const rollups = 200 * 365 * 1440;
  const raw = rawSamples * chunkB;
  const roll = rollups * rollupBPerRow;
  console.log(`extrapolated to 200 signals at 1 Hz: raw ${(raw / 1e9).toFixed(2)} GB (${fmt(rawSamples)} samples × ${chunkB.toFixed(2)} B) + roll-ups ${(roll / 1e9).toFixed(2)} GB (${fmt(rollups)} rows × ${rollupBPerRow.toFixed(1)} B) = ${((raw + roll) / 1e9).toFixed(2)} GB`);
  console.log(`bare better-sqlite3 rows for the same raw 30 days: ${((rawSamples * plainB) / 1e9).toFixed(2)} GB (${plainB.toFixed(1)} B/row), plus the same roll-ups`);
}

if (ONLY.has("size")) sizeCase();
if (ONLY.has("trend")) trendCase();
if (ONLY.has("year")) {
  if (sizeFigures === null && ONLY.has("size") === false) sizeCase();
  yearCase();
}
