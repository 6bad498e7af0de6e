// Where a replay's samples come from: a file in the history exchange format (CSV, DESIGN.md
// §6, read by src/sources/csv.ts) or the historian's own SQLite file, told apart by the file's
// first bytes (every SQLite file starts with "SQLite format 3\0").
//
//   CSV     read in 1 MiB blocks, line by line; a bad line is skipped and counted (with
//           file:line and what was expected), up to maxBadLines, beyond which the file is
//           taken not to be in the format at all and the replay stops.
//   SQLite  the configured signals, in windows of about 250,000 samples, each window merged
//           across signals in time order (equal times by signal id, as `millwarden export`
//           writes them), so that a replay of the file and of its export see the same samples in
//           the same order. A missing value is a bad sample, as in the export.
//
// Samples are handed to a callback one at a time; nothing holds more than one window.
import { closeSync, fstatSync, openSync, readSync } from "node:fs";
import { extname } from "node:path";
import type { Quality, Sample } from "../core/types.js";
import { HistoryCsvError, parseHistoryCsvHeader, parseHistoryCsvLine } from "../sources/csv.js";
import { Historian, type SamplePoint } from "../store/historian.js";

export type InputKind = "csv" | "sqlite";

const SQLITE_HEADER = Buffer.from("SQLite format 3\0", "latin1");
const SQLITE_EXTENSIONS = [".db", ".sqlite", ".sqlite3"];

/** The input cannot be replayed: the message says which file, where, and what was expected. */
export class ReplayInputError extends Error {
  override name = "ReplayInputError";
}

export interface InputOptions {
  /** Inclusive bounds on the samples' source time; null for none. */
  fromMs: number | null;
  toMs: number | null;
  /** The configured signals (SQLite reads these; CSV hands on every line and the core counts unknown ids). */
  signals: readonly { id: string; expectedPeriodS: number }[];
  /** More bad CSV lines than this stop the replay. */
  maxBadLines: number;
  /** Each bad line, as it is skipped. */
  onBadLine?: (e: HistoryCsvError) => void;
  /** SQLite: the time one window reads (default: about WINDOW_SAMPLES samples' worth, 1 min to 1 h). */
  windowMs?: number;
  /** Work out where the data ends (for a percentage) when `toMs` does not say; costs a pass over the roll-ups. */
  estimateEnd?: boolean;
}

export interface InputStats {
  kind: InputKind;
  path: string;
  /** Samples read: CSV lines in the format (bad and blank lines not counted), or stored samples. */
  rows: number;
  /** CSV lines skipped as not in the format. */
  badLines: number;
  /** Samples outside --from / --to (CSV; the SQLite reader does not read them). */
  outsideRange: number;
  /** SQLite: configured signals with no history in the file; stored signals the config does not have. */
  signalsWithoutHistory: string[];
  signalsNotConfigured: string[];
}

export interface ReplayInput {
  readonly kind: InputKind;
  readonly stats: InputStats;
  /** How far reading has come, 0..1, or null when it cannot be told. */
  fraction(): number | null;
  /** Hands every sample to `onSample`, in file order (CSV) or time order (SQLite). */
  forEach(onSample: (s: Sample) => void): void;
  close(): void;
}

/** What the file is, by its first bytes. */
export function detectInputKind(path: string): InputKind {
  let fd: number;
  try {
    fd = openSync(path, "r");
  } catch (e) {
    throw new ReplayInputError(`--input ${path}: cannot open the file (${(e as Error).message}); expected a history CSV file or a millwarden historian (SQLite)`);
  }
  try {
    if (fstatSync(fd).isDirectory()) throw new ReplayInputError(`--input ${path}: is a folder; expected a history CSV file or a millwarden historian (SQLite)`);
    const head = Buffer.alloc(SQLITE_HEADER.length);
    const n = readSync(fd, head, 0, head.length, 0);
    if (n === head.length && head.equals(SQLITE_HEADER)) return "sqlite";
    if (SQLITE_EXTENSIONS.includes(extname(path).toLowerCase())) {
      throw new ReplayInputError(
        `--input ${path}: the name says SQLite, but the file does not start with the SQLite header "SQLite format 3\\0" (found ${JSON.stringify(head.subarray(0, n).toString("latin1"))}); expected a millwarden historian or a history CSV file`,
      );
    }
    return "csv";
  } finally {
    closeSync(fd);
  }
}

export function openReplayInput(path: string, opts: InputOptions): ReplayInput {
  return detectInputKind(path) === "sqlite" ? new SqliteInput(path, opts) : new CsvInput(path, opts);
}

/** The samples of a historian that is already open (the daemon's warm start); close() leaves it open. */
export function historianInput(h: Historian, opts: InputOptions): ReplayInput {
  return new SqliteInput(h, opts);
}

// ---- CSV ----

const BLOCK_BYTES = 1 << 20;
/** Bad lines kept for the report; the count goes on beyond. */
export const BAD_LINES_KEPT = 10;

class CsvInput implements ReplayInput {
  readonly kind = "csv" as const;
  readonly stats: InputStats;
  private readonly fd: number;
  private readonly size: number;
  /** Bytes (about) of the lines handled so far. */
  private done = 0;
  /** The first bad lines, as errors (file:line, column, expected, found). */
  readonly firstBadLines: HistoryCsvError[] = [];

  constructor(
    private readonly path: string,
    private readonly opts: InputOptions,
  ) {
    this.fd = openSync(path, "r");
    this.size = fstatSync(this.fd).size;
    this.stats = { kind: "csv", path, rows: 0, badLines: 0, outsideRange: 0, signalsWithoutHistory: [], signalsNotConfigured: [] };
  }

  fraction(): number | null {
    return this.size > 0 ? Math.min(1, this.done / this.size) : null;
  }

  forEach(onSample: (s: Sample) => void): void {
    const { fromMs, toMs } = this.opts;
    const lo = fromMs ?? Number.NEGATIVE_INFINITY;
    const hi = toMs ?? Number.POSITIVE_INFINITY;
    const buf = Buffer.allocUnsafe(BLOCK_BYTES);
    let carry: Buffer | null = null;
    let lineNo = 0;
    const line = (text: string): void => {
      lineNo++;
      if (lineNo === 1) {
        parseHistoryCsvHeader(text, 1, this.path);
        return;
      }
      let s: Sample | null;
      try {
        s = parseHistoryCsvLine(text, lineNo, this.path);
      } catch (e) {
        if (!(e instanceof HistoryCsvError)) throw e;
        this.bad(e);
        return;
      }
      if (s === null) return;
      this.stats.rows++;
      if (s.sourceTimeMs < lo || s.sourceTimeMs > hi) {
        this.stats.outsideRange++;
        return;
      }
      onSample(s);
    };
    for (;;) {
      const n = readSync(this.fd, buf, 0, buf.length, null);
      if (n === 0) break;
      const data: Buffer = carry === null ? buf.subarray(0, n) : Buffer.concat([carry, buf.subarray(0, n)]);
      // Cut after the last line end: a line feed byte never occurs inside a UTF-8 sequence.
      const last = data.lastIndexOf(10);
      if (last < 0) {
        carry = Buffer.from(data);
        continue;
      }
      carry = last + 1 < data.length ? Buffer.from(data.subarray(last + 1)) : null;
      const lines = data.toString("utf8", 0, last).split("\n");
      for (const l of lines) {
        // Characters, not bytes: the same for the ASCII the format mostly is, and only for the progress bar.
        this.done += l.length + 1;
        line(l);
      }
    }
    if (carry !== null) line(carry.toString("utf8"));
    if (lineNo === 0) {
      throw new HistoryCsvError(this.path, 1, null, 'the header line "time,signal,value,quality" (quality optional)', "an empty file");
    }
  }

  private bad(e: HistoryCsvError): void {
    this.stats.badLines++;
    if (this.firstBadLines.length < BAD_LINES_KEPT) this.firstBadLines.push(e);
    this.opts.onBadLine?.(e);
    if (this.stats.badLines > this.opts.maxBadLines) {
      throw new ReplayInputError(
        `${this.path}: more than ${this.opts.maxBadLines} lines not in the history exchange format (the last at line ${e.line}: ${e.message}); ` +
          "stopping: expected time,signal,value,quality lines (see DESIGN.md §6); --max-bad-lines N allows more",
      );
    }
  }

  close(): void {
    closeSync(this.fd);
  }
}

// ---- SQLite ----

/** Samples per window, about: the window holds this many point objects at a time. */
const WINDOW_SAMPLES = 250_000;
const MIN_WINDOW_MS = 60_000;
const MAX_WINDOW_MS = 3_600_000;
const QUALITY_FOR_MISSING: Quality = "bad";

class SqliteInput implements ReplayInput {
  readonly kind = "sqlite" as const;
  readonly stats: InputStats;
  private readonly h: Historian;
  /** Opened here (closed by close()), or lent by the caller. */
  private readonly owned: boolean;
  /** Configured signals with history, sorted as the export sorts them (equal times in this order). */
  private readonly signals: string[];
  private readonly windowMs: number;
  private startMs: number | null = null;
  private endEstimateMs: number | null = null;
  private dataTimeMs: number | null = null;

  constructor(
    source: string | Historian,
    private readonly opts: InputOptions,
  ) {
    if (opts.windowMs !== undefined && !(Number.isSafeInteger(opts.windowMs) && opts.windowMs >= 1)) {
      throw new RangeError(`replay input: windowMs: expected a whole number of milliseconds ≥ 1, found ${String(opts.windowMs)}`);
    }
    this.owned = typeof source === "string";
    this.h = typeof source === "string" ? Historian.open({ path: source }) : source;
    const path = typeof source === "string" ? source : this.h.path;
    const known = new Set(this.h.knownSignals());
    const configured = new Set(opts.signals.map((s) => s.id));
    this.signals = [...configured].filter((id) => known.has(id)).sort();
    this.stats = {
      kind: "sqlite",
      path,
      rows: 0,
      badLines: 0,
      outsideRange: 0,
      signalsWithoutHistory: [...configured].filter((id) => !known.has(id)).sort(),
      signalsNotConfigured: [...known].filter((id) => !configured.has(id)).sort(),
    };
    // Samples per second of the signals read, from their expected periods.
    const period = new Map(opts.signals.map((s) => [s.id, s.expectedPeriodS]));
    const perS = this.signals.reduce((sum, id) => sum + 1 / Math.max(0.001, period.get(id) ?? 1), 0);
    this.windowMs = opts.windowMs ?? Math.min(MAX_WINDOW_MS, Math.max(MIN_WINDOW_MS, Math.floor((WINDOW_SAMPLES / Math.max(perS, 1e-9)) * 1000)));
  }

  fraction(): number | null {
    const end = this.opts.toMs ?? this.endEstimateMs;
    if (this.startMs === null || this.dataTimeMs === null || end === null || !(end > this.startMs)) return null;
    return Math.min(1, Math.max(0, (this.dataTimeMs - this.startMs) / (end - this.startMs)));
  }

  /** The earliest sample time ≥ fromMs (≤ toMs) of any signal read, or null. */
  private firstAtOrAfter(fromMs: number, toMs: number): number | null {
    let first: number | null = null;
    for (const id of this.signals) {
      const p = this.h.samples(id, fromMs, toMs, 1)[0];
      if (p !== undefined && (first === null || p.tMs < first)) first = p.tMs;
    }
    return first;
  }

  private estimateEnd(): number | null {
    let end: number | null = null;
    for (const id of this.signals) {
      const r = this.h.rollups(id, this.startMs ?? Number.NEGATIVE_INFINITY, Number.POSITIVE_INFINITY).at(-1);
      if (r !== undefined && (end === null || r.tMinuteMs + 59_999 > end)) end = r.tMinuteMs + 59_999;
    }
    return end;
  }

  forEach(onSample: (s: Sample) => void): void {
    const endMs = this.opts.toMs ?? Number.POSITIVE_INFINITY;
    let a = this.firstAtOrAfter(this.opts.fromMs ?? Number.NEGATIVE_INFINITY, endMs);
    this.startMs = a;
    if (a === null) return;
    if (this.opts.estimateEnd === true && this.opts.toMs === null) this.endEstimateMs = this.estimateEnd();
    const n = this.signals.length;
    const pos = new Int32Array(n);
    const heap = new Int32Array(n);
    while (a !== null && a <= endMs) {
      const b = Math.min(endMs, a + this.windowMs - 1);
      const pts: SamplePoint[][] = this.signals.map((id) => this.h.samples(id, a as number, b));
      let size = 0;
      for (let i = 0; i < n; i++) {
        pos[i] = 0;
        if (pts[i]!.length > 0) heap[size++] = i;
      }
      if (size === 0) {
        // A gap in the data: go on at the next sample of any signal.
        a = b >= endMs ? null : this.firstAtOrAfter(b + 1, endMs);
        continue;
      }
      // A binary heap of signal indices by (time of the signal's next point, index).
      const less = (i: number, j: number): boolean => {
        const ti = pts[i]![pos[i]!]!.tMs;
        const tj = pts[j]![pos[j]!]!.tMs;
        return ti < tj || (ti === tj && i < j);
      };
      const down = (k: number): void => {
        for (;;) {
          const l = 2 * k + 1;
          const r = l + 1;
          let m = k;
          if (l < size && less(heap[l]!, heap[m]!)) m = l;
          if (r < size && less(heap[r]!, heap[m]!)) m = r;
          if (m === k) return;
          const t = heap[k]!;
          heap[k] = heap[m]!;
          heap[m] = t;
          k = m;
        }
      };
      for (let k = (size >> 1) - 1; k >= 0; k--) down(k);
      while (size > 0) {
        const i = heap[0]!;
        const list = pts[i]!;
        const p = list[pos[i]!]!;
        const missing = p.value === null;
        this.stats.rows++;
        this.dataTimeMs = p.tMs;
        onSample({
          signal: this.signals[i]!,
          value: missing ? Number.NaN : (p.value as number),
          quality: missing ? QUALITY_FOR_MISSING : p.quality,
          sourceTimeMs: p.tMs,
          receiveTimeMs: p.tMs,
        });
        pos[i]!++;
        if (pos[i]! >= list.length) heap[0] = heap[--size]!;
        down(0);
      }
      a = b >= endMs ? null : b + 1;
    }
  }

  close(): void {
    if (this.owned) this.h.close();
  }
}

/** The first bad lines a CSV input kept (empty for SQLite). */
export function firstBadLines(input: ReplayInput): HistoryCsvError[] {
  return input instanceof CsvInput ? input.firstBadLines : [];
}
