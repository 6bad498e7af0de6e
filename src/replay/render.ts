// Plain text tables of a replay's summary and of a comparison of two configs. Pure: the same
// summary gives the same text (times in UTC, digits grouped the same way whatever the locale).
import type { RaiseComparison, RaiseRef } from "./compare.js";
import { groupDigits } from "./progress.js";
import { BENCHMARKS, type PeriodFigures, type PositionSummary, type ReplaySummary } from "./summary.js";
import { utc } from "./time.js";

type Align = "l" | "r";

/** The data clock's first tick comes at the first whole second after the first sample. */
const FIRST_TICK_MS = 1000;

/** Columns padded to their widest cell; two spaces between columns; no trailing spaces. */
export function table(head: readonly string[], rows: readonly (readonly string[])[], align: readonly Align[]): string {
  const widths = head.map((h, c) => Math.max(h.length, ...rows.map((r) => (r[c] ?? "").length)));
  const line = (cells: readonly string[]) =>
    cells
      .map((cell, c) => (align[c] === "r" ? cell.padStart(widths[c]!) : cell.padEnd(widths[c]!)))
      .join("  ")
      .trimEnd();
  return [line(head), ...rows.map(line)].join("\n");
}

export function duration(ms: number): string {
  const total = Math.round(ms / 1000);
  const h = Math.floor(total / 3600);
  const m = Math.floor((total % 3600) / 60);
  const s = total % 60;
  return `${h}:${String(m).padStart(2, "0")}:${String(s).padStart(2, "0")}`;
}

const fixed = (v: number | null, digits: number): string => (v === null ? "-" : v.toFixed(digits));
const percent = (v: number | null): string => (v === null ? "-" : `${v.toFixed(1)} %`);
/** A measured value as the core gave it, shortened to 6 significant digits. */
export const valueText = (v: number | null): string => (v === null || !Number.isFinite(v) ? "-" : String(Number(v.toPrecision(6))));
/** Minutes precision is enough to find a period on a trend. */
const minuteUtc = (ms: number | null): string => (ms === null ? "" : `${utc(ms).slice(0, 16)}Z`);

function peak(f: PeriodFigures): string {
  return f.peakAtMs === null ? "0" : `${f.peak} (${minuteUtc(f.peakAtMs)})`;
}

function rateRows(positions: readonly PositionSummary[]): string[][] {
  return positions.map((p) => [
    p.position,
    groupDigits(p.raises),
    fixed(p.perHour, 2),
    fixed(p.per10Min.average, 2),
    peak(p.per10Min),
    fixed(p.perHourPeriods.average, 2),
    peak(p.perHourPeriods),
    p.verdict ?? "-",
  ]);
}

export function renderSummary(s: ReplaySummary): string {
  const out: string[] = [];
  const b = BENCHMARKS;
  const scope = s.position === null ? "all operator positions" : `operator position ${s.position}`;
  out.push(`Replay summary, ${scope}: ${utc(s.fromMs)} .. ${utc(s.toMs)} (${duration(s.spanMs)}, ${(s.spanMs / 3_600_000).toFixed(2)} h)`);
  const kinds = Object.entries(s.transitions).map(([k, n]) => `${k} ${groupDigits(n)}`);
  out.push(`raises: ${groupDigits(s.raises)}; all transitions: ${kinds.length ? kinds.join(", ") : "none"}`);
  if (s.eventsOutsideSpan > 0) out.push(`(${groupDigits(s.eventsOutsideSpan)} events outside the span left out)`);

  out.push("", `Advisories per operator position (raises only); 10-minute and 1-hour periods from the span's start`);
  out.push(`benchmarks (${b.source}): about ${b.acceptablePerHour}/h very likely acceptable, ${b.manageablePerHour}/h maximum manageable`);
  out.push(
    s.positions.length === 0
      ? "no raises"
      : table(["position", "raises", "per hour", "avg /10 min", "peak /10 min", "avg /h", "peak /h", "verdict"], rateRows(s.positions), ["l", "r", "r", "r", "l", "r", "l", "l"]),
  );

  if (s.positions.length > 0) {
    out.push(
      "",
      `Flood: 10-minute periods with more than ${b.floodRaisesPer10Min} raises (counted here), and the floods the core reported`,
      "(the core leaves out the raises of an advisory already marked chattering: such periods show as over, outside a flood)",
    );
    out.push(
      table(
        ["position", "periods", `over ${b.floodRaisesPer10Min}`, "share", "floods (core)", "time in flood", "share", "periods in a flood", "over, outside a flood"],
        s.positions.map((p) => [
          p.position,
          groupDigits(p.per10Min.periods),
          groupDigits(p.flood.periodsOverLimit),
          percent(p.flood.periodsOverLimitPct),
          groupDigits(p.flood.floods),
          duration(p.flood.timeInFloodMs),
          percent(p.flood.timeInFloodPct),
          `${groupDigits(p.flood.periodsInCoreFlood)} (${percent(p.flood.periodsInCoreFloodPct)})`,
          groupDigits(p.flood.periodsOverLimitOutsideCoreFlood),
        ]),
        ["l", "r", "r", "r", "r", "r", "r", "r", "r"],
      ),
    );
    const odd = s.positions.filter((p) => p.flood.periodsOverLimitOutsideCoreFlood > 0);
    if (odd.length > 0) {
      out.push(`note: ${odd.map((p) => p.position).join(", ")}: periods over ${b.floodRaisesPer10Min} raises that no flood of the core covers (the core did not report floods, or counts differently)`);
    }
  }

  out.push("", `Tier mix of raises (benchmark about ${b.tierMixPct.notice} / ${b.tierMixPct.caution} / ${b.tierMixPct.warning} %, ${b.source})`);
  out.push(table(["tier", "raises", "share", "benchmark"], s.tiers.map((t) => [t.tier, groupDigits(t.raises), percent(t.pct), `${t.benchmarkPct} %`]), ["l", "r", "r", "r"]));

  out.push("", s.topRules.length > 0 ? `Most frequent rules (top ${s.topRules.length})` : "Most frequent rules");
  out.push(
    s.topRules.length === 0
      ? "none"
      : table(
          ["rule", "raises", "share", "notice", "caution", "warning"],
          s.topRules.map((r) => [r.ruleId, groupDigits(r.raises), percent(r.pct), groupDigits(r.byTier.notice), groupDigits(r.byTier.caution), groupDigits(r.byTier.warning)]),
          ["l", "r", "r", "r", "r", "r"],
        ),
  );

  out.push("", "Chattering advisories (as the core reported them)");
  out.push(
    s.chattering.length === 0
      ? "none"
      : table(
          ["advisory", "position", "episodes", "most raises in the window", "time chattering", "first"],
          s.chattering.map((c) => [c.advisoryId, c.position, groupDigits(c.episodes), groupDigits(c.maxCount), duration(c.chatteringMs), utc(c.firstAtMs)]),
          ["l", "l", "r", "r", "r", "l"],
        ),
  );

  out.push("", "Standing advisories (as the core reported them)");
  out.push(
    s.standing.length === 0
      ? "none"
      : table(["advisory", "position", "first reported", "reports"], s.standing.map((x) => [x.advisoryId, x.position, utc(x.firstAtMs), groupDigits(x.reports)]), ["l", "l", "l", "r"]),
  );

  out.push("", "Time in each state (from the core's state changes: until the next change of the key, or the span's end)");
  const rows: string[][] = [];
  for (const st of s.states) {
    // The core reports every state at its first tick, one second after the first sample: not worth a row.
    if (st.unreportedMs > FIRST_TICK_MS) rows.push([st.subject, st.family, "(before the first report)", duration(st.unreportedMs), percent(s.spanMs > 0 ? (100 * st.unreportedMs) / s.spanMs : 0)]);
    for (const t of st.times) rows.push([st.subject, st.family, t.value ?? "(cannot be told)", duration(t.ms), percent(t.pct)]);
  }
  out.push(rows.length === 0 ? "no state changes reported" : table(["unit / analyser", "state", "value", "time", "share"], rows, ["l", "l", "l", "r", "r"]));
  return out.join("\n") + "\n";
}

function raiseRows(list: readonly RaiseRef[]): string[][] {
  return list.map((r) => [utc(r.atMs), r.ruleId, r.tier, valueText(r.value), valueText(r.limit)]);
}

/** What each config raised that the other did not, and the main figures of both side by side. */
export function renderComparison(labelA: string, labelB: string, c: RaiseComparison, a: ReplaySummary, b: ReplaySummary): string {
  const out: string[] = [];
  const tol = `${c.toleranceMs / 1000} s`;
  out.push(`Comparison: A = ${labelA}, B = ${labelB}; a raise of the same rule within ${tol} counts as the same`);
  const maxDt = c.matched.reduce((m, p) => Math.max(m, Math.abs(p.dtMs)), 0);
  out.push(`raises: A ${groupDigits(c.raisesA)}, B ${groupDigits(c.raisesB)}; matched ${groupDigits(c.matched.length)}${c.matched.length ? ` (largest time difference ${maxDt / 1000} s)` : ""}`);
  for (const [name, label, list] of [
    ["A", labelA, c.onlyA],
    ["B", labelB, c.onlyB],
  ] as const) {
    out.push("", `Raised by ${name} only (${label}): ${groupDigits(list.length)}`);
    if (list.length > 0) out.push(table(["time", "rule", "tier", "value", "limit"], raiseRows(list), ["l", "l", "l", "r", "r"]));
  }

  out.push("", "Figures side by side");
  const rows: string[][] = [["raises", groupDigits(a.raises), groupDigits(b.raises)]];
  const names = [...new Set([...a.positions, ...b.positions].map((p) => p.position))].sort();
  for (const n of names) {
    const pa = a.positions.find((p) => p.position === n);
    const pb = b.positions.find((p) => p.position === n);
    const row = (what: string, f: (p: PositionSummary) => string) => rows.push([`${n}: ${what}`, pa ? f(pa) : "-", pb ? f(pb) : "-"]);
    row("raises per hour", (p) => fixed(p.perHour, 2));
    row("verdict", (p) => p.verdict ?? "-");
    row("peak per 10 min", (p) => String(p.per10Min.peak));
    row("peak per hour", (p) => String(p.perHourPeriods.peak));
    row(`10-min periods over ${BENCHMARKS.floodRaisesPer10Min}`, (p) => `${p.flood.periodsOverLimit} (${percent(p.flood.periodsOverLimitPct)})`);
    row("floods (core)", (p) => String(p.flood.floods));
  }
  for (const t of ["notice", "caution", "warning"] as const) {
    const share = (s: ReplaySummary) => {
      const x = s.tiers.find((y) => y.tier === t)!;
      return `${groupDigits(x.raises)} (${percent(x.pct)})`;
    };
    rows.push([`tier ${t} (benchmark ${BENCHMARKS.tierMixPct[t]} %)`, share(a), share(b)]);
  }
  rows.push(["chattering advisories", groupDigits(a.chattering.length), groupDigits(b.chattering.length)]);
  rows.push(["standing advisories", groupDigits(a.standing.length), groupDigits(b.standing.length)]);
  out.push(table(["", "A", "B"], rows, ["l", "r", "r"]));
  return out.join("\n") + "\n";
}
