// `millwarden replay`: a stretch of history through the same core the daemon runs, on the
// data's own clock; the advisory transitions and nuisance events as JSON lines, and the
// alarm-management summary (rates per operator position against the ISA-18.2 / EEMUA 191
// benchmarks, floods, chatter, standing, tier mix, most frequent rules, time in each state).
// With --compare, the same input through a second config, and what each raised that the
// other did not.
//
//   --input (CSV | SQLite) ──samples──▶ Replay(config) ──events──▶ --out events.jsonl
//                              └──────▶ Replay(compare)      └──▶ summary ──▶ stdout (text | --json)
//
// stdout and the events file depend on the input and the configs only (no wall-clock time);
// elapsed time, progress and warnings go to stderr.
import { closeSync, openSync, renameSync, rmSync, writeSync } from "node:fs";
import { parseArgs } from "node:util";
import { ConfigError, loadConfig } from "../config/load.js";
import type { MillwardenConfig } from "../config/schema.js";
import { ADVISORY_ONLY, type Sample } from "../core/types.js";
import { HistoryCsvError } from "../sources/csv.js";
import { compareRaises, DEFAULT_MATCH_TOLERANCE_MS } from "../replay/compare.js";
import { BAD_LINES_KEPT, openReplayInput, ReplayInputError, type InputStats } from "../replay/input.js";
import { eventJsonLine, isWrittenEvent } from "../replay/jsonl.js";
import { groupDigits, Progress } from "../replay/progress.js";
import { renderComparison, renderSummary } from "../replay/render.js";
import { Replay, type ReplayCounts } from "../replay/run.js";
import { summarize, type ReplayEvent, type ReplaySummary } from "../replay/summary.js";
import { parseTimeArg, utc } from "../replay/time.js";

export const REPLAY_USAGE = `usage: millwarden replay --config FILE --input FILE [options]

  --input FILE          history CSV (time,signal,value,quality) or a millwarden historian (SQLite)
  --from T, --to T      only samples with from <= time <= to (RFC 3339, e.g. 2026-01-12T06:00:00Z, or epoch ms)
  --out FILE            write every advisory transition and nuisance event as a JSON line
  --compare OTHER.yaml  replay the same input against a second config (same signals) and list
                        the raises each made that the other did not (same rule within 60 s = same)
  --position NAME       limit the summary to one operator position
  --json                print the summary as JSON instead of tables
  --max-bad-lines N     stop after more than N CSV lines not in the format (default 100)

${ADVISORY_ONLY}`;

class UsageError extends Error {}

export interface ReplayIo {
  stdout(text: string): void;
  stderr(text: string): void;
  /** Draw the progress bar (stderr is a terminal). */
  progress: boolean;
}

const processIo = (): ReplayIo => ({
  stdout: (t) => process.stdout.write(t),
  stderr: (t) => process.stderr.write(t),
  progress: process.stderr.isTTY === true,
});

function timeFlag(v: string | undefined, name: string): number | null {
  if (v === undefined) return null;
  const t = parseTimeArg(v);
  if (typeof t !== "number") throw new UsageError(`--${name}: expected ${t.error}; found "${v}"`);
  return t;
}

/**
 * Buffered lines to a file, written in blocks to "<path>.partial" and renamed to the path once
 * complete: a replay that stops half-way leaves no events file that looks whole.
 */
class LineFile {
  private readonly fd: number;
  private readonly partial: string;
  private buf: string[] = [];
  private size = 0;

  constructor(readonly path: string) {
    this.partial = `${path}.partial`;
    try {
      this.fd = openSync(this.partial, "w");
    } catch (e) {
      throw new ReplayInputError(`--out ${path}: cannot write the events file (${(e as Error).message})`);
    }
  }

  line(text: string): void {
    this.buf.push(text);
    this.size += text.length;
    if (this.size > 1 << 16) this.flush();
  }

  flush(): void {
    if (this.buf.length === 0) return;
    writeSync(this.fd, this.buf.join("\n") + "\n");
    this.buf = [];
    this.size = 0;
  }

  /** Complete: the file takes its name. Not complete: the partial file is removed. */
  close(complete: boolean): void {
    if (complete) this.flush();
    closeSync(this.fd);
    if (complete) renameSync(this.partial, this.path);
    else rmSync(this.partial, { force: true });
  }
}

function sameSignals(a: MillwardenConfig, b: MillwardenConfig, pathA: string, pathB: string): void {
  const ia = new Set(a.signals.map((s) => s.id));
  const ib = new Set(b.signals.map((s) => s.id));
  const onlyA = [...ia].filter((id) => !ib.has(id)).sort();
  const onlyB = [...ib].filter((id) => !ia.has(id)).sort();
  if (onlyA.length === 0 && onlyB.length === 0) return;
  const list = (xs: string[]) => (xs.length === 0 ? "none" : xs.map((x) => `"${x}"`).join(", "));
  throw new UsageError(
    `--compare ${pathB}: expected the same signal ids as ${pathA} (both configs replay the same samples); ` + `only in ${pathA}: ${list(onlyA)}; only in ${pathB}: ${list(onlyB)}`,
  );
}

const DEFAULT_POSITION = "control-room";

function positionsOf(cfg: MillwardenConfig): string[] {
  return [...new Set(cfg.rules.map((r) => r.position ?? DEFAULT_POSITION))];
}

/** The advisory's operator position: its rule's (advisory ids are rule ids, the events tell the rule of any other). */
function positionLookup(cfg: MillwardenConfig, events: readonly ReplayEvent[]): (advisoryId: string) => string {
  const byRule = new Map(cfg.rules.map((r) => [r.id, r.position ?? DEFAULT_POSITION]));
  const ruleOf = new Map<string, string>();
  for (const e of events) if (e.kind === "advisory") ruleOf.set(e.advisoryId, e.ruleId);
  return (id) => byRule.get(ruleOf.get(id) ?? id) ?? DEFAULT_POSITION;
}

interface RunReport {
  config: string;
  replay: ReplayCounts & { signalsWithoutSamples: string[]; unknownSignalIds: string[] };
  summary: ReplaySummary;
}

function report(path: string, r: Replay, span: { fromMs: number; toMs: number }, positions: string[], position: string | undefined): RunReport {
  const signalsWithoutSamples = r.engine
    .snapshot()
    .signals.filter((s) => s.sourceTimeMs === null)
    .map((s) => s.id)
    .sort();
  return {
    config: path,
    replay: { ...r.counts, signalsWithoutSamples, unknownSignalIds: [...r.unknownSignals.keys()].sort() },
    summary: summarize(r.events, span, positionLookup(r.cfg, r.events), { positions, position }),
  };
}

function inputLines(stats: InputStats, from: number | null, to: number | null, run: RunReport): string {
  const c = run.replay;
  const lines = [
    `millwarden replay: ${run.config} over ${stats.path} (${stats.kind === "csv" ? "history CSV" : "historian, SQLite"})` +
      (from !== null || to !== null ? `, ${from === null ? "start" : utc(from)} .. ${to === null ? "end" : utc(to)}` : ""),
    `input: ${groupDigits(stats.rows)} ${stats.kind === "csv" ? "samples read (lines in the format)" : "stored samples read"}` +
      (stats.kind === "csv" ? `, ${groupDigits(stats.badLines)} bad lines skipped, ${groupDigits(stats.outsideRange)} outside --from/--to` : ""),
    `core: ${groupDigits(c.samples)} samples, ${groupDigits(c.accepted)} accepted, ${groupDigits(c.unknownSignal)} of unknown signals, ` +
      `${groupDigits(c.duplicate)} duplicates, ${groupDigits(c.outOfOrder)} out of order, ${groupDigits(c.late)} behind the clock; ` +
      `${groupDigits(c.ticks)} ticks` +
      (c.skippedTicks > 0 ? `, ${groupDigits(c.skippedTicks)} seconds of gaps over 1 h not ticked` : ""),
  ];
  if (stats.signalsNotConfigured.length > 0) lines.push(`stored signals not in the config (not read): ${stats.signalsNotConfigured.join(", ")}`);
  if (c.unknownSignalIds.length > 0) lines.push(`signals not in the config (ignored): ${c.unknownSignalIds.join(", ")}${c.unknownSignalIds.length >= 100 ? ", ..." : ""}`);
  if (c.signalsWithoutSamples.length > 0) lines.push(`configured signals without a sample: ${c.signalsWithoutSamples.join(", ")}`);
  return lines.join("\n") + "\n";
}

/** `millwarden replay ...`; returns the exit code (0 done, 1 failed, 2 bad usage). */
export async function replayCommand(args: string[], io: ReplayIo = processIo()): Promise<number> {
  try {
    return await run(args, io);
  } catch (e) {
    if (e instanceof ConfigError) {
      io.stderr(`config errors:\n${e.message}\n`);
      return 1;
    }
    const code = (e as NodeJS.ErrnoException).code;
    if (e instanceof UsageError || (typeof code === "string" && code.startsWith("ERR_PARSE_ARGS"))) {
      io.stderr(`${(e as Error).message}\n\n${REPLAY_USAGE}\n`);
      return 2;
    }
    io.stderr(`millwarden replay: ${(e as Error).message}\n`);
    return 1;
  }
}

async function run(args: string[], io: ReplayIo): Promise<number> {
  const { values } = parseArgs({
    args,
    options: {
      config: { type: "string" },
      input: { type: "string" },
      from: { type: "string" },
      to: { type: "string" },
      out: { type: "string" },
      compare: { type: "string" },
      position: { type: "string" },
      json: { type: "boolean", default: false },
      "max-bad-lines": { type: "string" },
      help: { type: "boolean", default: false },
    },
  });
  if (values.help) {
    io.stdout(`${REPLAY_USAGE}\n`);
    return 0;
  }
  if (!values.config) throw new UsageError("--config FILE is required");
  if (!values.input) throw new UsageError("--input FILE is required (history CSV or a millwarden historian file)");
  const fromMs = timeFlag(values.from, "from");
  const toMs = timeFlag(values.to, "to");
  if (fromMs !== null && toMs !== null && !(fromMs < toMs)) throw new UsageError(`--from (${utc(fromMs)}) must be earlier than --to (${utc(toMs)})`);
  let maxBadLines = 100;
  if (values["max-bad-lines"] !== undefined) {
    const v = values["max-bad-lines"];
    if (!/^\d+$/.test(v)) throw new UsageError(`--max-bad-lines: expected a whole number of lines (0 or more); found "${v}"`);
    maxBadLines = Number(v);
  }

  const cfgA = loadConfig(values.config);
  const cfgB = values.compare === undefined ? null : loadConfig(values.compare);
  if (cfgB !== null) sameSignals(cfgA, cfgB, values.config, values.compare!);
  const positions = [...new Set([...positionsOf(cfgA), ...(cfgB ? positionsOf(cfgB) : [])])].sort();
  if (values.position !== undefined && !positions.includes(values.position)) {
    throw new UsageError(`--position: expected one of the operator positions of the rules (${positions.join(", ") || DEFAULT_POSITION}); found "${values.position}"`);
  }

  const input = openReplayInput(values.input, {
    fromMs,
    toMs,
    signals: cfgA.signals,
    maxBadLines,
    estimateEnd: io.progress,
    onBadLine: (e: HistoryCsvError) => {
      if (input.stats.badLines <= BAD_LINES_KEPT) io.stderr(`skipped: ${e.message}\n`);
      if (input.stats.badLines === BAD_LINES_KEPT + 1) io.stderr("(further bad lines are counted, not shown)\n");
    },
  });
  let out: LineFile | null;
  try {
    out = values.out === undefined ? null : new LineFile(values.out);
  } catch (e) {
    input.close();
    throw e;
  }
  const progress = new Progress({ write: io.stderr }, io.progress);
  const file = out;
  const a = new Replay(cfgA, file === null ? undefined : (e) => (isWrittenEvent(e) ? file.line(eventJsonLine(e)) : undefined));
  const b = cfgB === null ? null : new Replay(cfgB);
  let n = 0;
  let complete = false;
  try {
    input.forEach((s: Sample) => {
      a.push(s);
      b?.push(s);
      if ((++n & 4095) === 0 && progress.due()) progress.draw(input.fraction(), n, s.sourceTimeMs);
    });
    complete = true;
  } finally {
    const elapsedS = progress.done();
    input.close();
    out?.close(complete);
    io.stderr(`replayed ${groupDigits(n)} samples in ${elapsedS.toFixed(1)} s (${groupDigits(Math.round(n / Math.max(elapsedS, 1e-9)))} samples/s)\n`);
  }
  if (input.stats.badLines > 0) io.stderr(`${groupDigits(input.stats.badLines)} bad lines skipped (see above; the summary counts them)\n`);
  if (a.firstSampleMs === null || a.lastSampleMs === null) {
    const where = fromMs !== null || toMs !== null ? " within --from/--to" : "";
    throw new ReplayInputError(
      `--input ${values.input}: no samples${where}` + (input.kind === "sqlite" ? ` of the signals of ${values.config}` : "") + "; expected history of the configured signals",
    );
  }
  const span = { fromMs: a.firstSampleMs, toMs: a.lastSampleMs };
  const ra = report(values.config, a, span, positions, values.position);
  const rb = b === null ? null : report(values.compare!, b, span, positions, values.position);
  const comparison = rb === null ? null : compareRaises(a.events, b!.events, DEFAULT_MATCH_TOLERANCE_MS);

  if (ra.replay.late > 0) io.stderr(`warning: ${groupDigits(ra.replay.late)} samples came after the data clock had passed their time: the input is not in time order across signals\n`);
  if (input.stats.kind === "sqlite" && input.stats.signalsWithoutHistory.length > 0) {
    io.stderr(`warning: no history in ${values.input} for ${input.stats.signalsWithoutHistory.join(", ")}\n`);
  }

  if (values.json) {
    const doc: Record<string, unknown> = { advisoryOnly: ADVISORY_ONLY, input: { ...input.stats, fromMs, toMs }, ...ra };
    if (rb !== null) doc.compare = { ...rb, comparison };
    io.stdout(`${JSON.stringify(doc, null, 2)}\n`);
    return 0;
  }
  let text = `${ADVISORY_ONLY}\n\n${inputLines(input.stats, fromMs, toMs, ra)}\n${renderSummary(ra.summary)}`;
  if (rb !== null && comparison !== null) {
    text += `\n${"=".repeat(20)} B: ${rb.config}\n${inputLines(input.stats, fromMs, toMs, rb)}\n${renderSummary(rb.summary)}`;
    text += `\n${"=".repeat(20)}\n${renderComparison(values.config, values.compare!, comparison, ra.summary, rb.summary)}`;
  }
  io.stdout(text);
  return 0;
}
