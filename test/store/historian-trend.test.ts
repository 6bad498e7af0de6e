// Reading for trends and export: trend() picks raw data or roll-ups by span and reduces with
// LTTB (compared with lttb() on the same points), keeping extremes in min/max bands;
// exportCsv() streams the history exchange format, read back with the project's own reader
// of that format (src/sources/csv.ts).
import { join } from "node:path";
import { afterEach, beforeEach, describe, expect, it } from "vitest";
import { Historian, type HistorianOptions } from "../../src/store/historian.js";
import { lttb } from "../../src/store/lttb.js";
import { parseHistoryCsvHeader, parseHistoryCsvLine } from "../../src/sources/csv.js";
import { T0, derived, sample, tempDir } from "./helpers.js";

let dir: string;
let cleanup: () => void;
const open: Historian[] = [];
beforeEach(() => {
  ({ dir, cleanup } = tempDir());
});
afterEach(() => {
  for (const h of open.splice(0)) h.close();
  cleanup();
});

const MIN = 60_000;
const HOUR = 3_600_000;

function openHistorian(extra: Partial<HistorianOptions> = {}): Historian {
  const h = Historian.open({ path: join(dir, "hist.db"), sealIntervalS: 1, sealAgeS: 0, ...extra });
  open.push(h);
  return h;
}

/** A mill outlet temperature at 1 Hz: slow swing, 2-decimal noise, one spike and one dip. */
const tt = (s: number): number => (s === 4321 ? 140.5 : s === 777 ? 12.25 : Math.round((86 + 4 * Math.sin(s / 900) + ((s * 37) % 17) / 40) * 100) / 100);

function fill(h: Historian, seconds: number, signal = "VM2-TT-111"): void {
  for (let s = 0; s < seconds; s++) h.appendSample(sample(signal, T0 + s * 1000, tt(s)));
  h.flush();
}

describe("Historian.trend", () => {
  it("gives the raw samples as they are when the range holds no more than `points`", () => {
    const h = openHistorian();
    fill(h, 100);
    const tr = h.trend("VM2-TT-111", T0, T0 + 99_000, 200);
    expect(tr.source).toBe("raw");
    expect(tr.points).toEqual(h.samples("VM2-TT-111", T0, T0 + 99_000).map((p) => ({ tMs: p.tMs, value: p.value, quality: p.quality })));
  });

  it("reduces raw data with LTTB to `points`, each with the min and max of its bucket", () => {
    const h = openHistorian();
    fill(h, 6000);
    h.maintain(T0 + 61 * MIN); // seal most of it: the trend reads chunks and recent rows together
    const raw = h.samples("VM2-TT-111", T0, T0 + 6_000_000);
    const tr = h.trend("VM2-TT-111", T0, T0 + 6_000_000, 1000);
    // 6000 ≤ 10 × 1000: raw data.
    expect(tr.source).toBe("raw");
    expect(tr.points).toHaveLength(1000);
    // The same points LTTB keeps from the samples themselves.
    const kept = lttb(raw.map((p) => p.tMs), raw.map((p) => p.value as number), 1000);
    expect(tr.points.map((p) => p.tMs)).toEqual([...kept].map((i) => raw[i]?.tMs));
    expect(tr.points[0]?.tMs).toBe(T0);
    expect(tr.points.at(-1)?.tMs).toBe(T0 + 5_999_000);
    // The spike and the dip are visible, in the line or at least in a band.
    expect(Math.max(...tr.points.map((p) => p.max ?? (p.value as number)))).toBe(140.5);
    expect(Math.min(...tr.points.map((p) => p.min ?? (p.value as number)))).toBe(12.25);
    // Each band holds its own value.
    for (const p of tr.points) if (p.min !== undefined) expect(p.min <= (p.value as number) && (p.value as number) <= (p.max as number)).toBe(true);
  });

  it("uses the 1-minute roll-ups when the range holds more than 10 × points samples", () => {
    const h = openHistorian();
    fill(h, 24 * 3600);
    h.maintain(T0 + 24 * HOUR - 5 * MIN); // all but the last minutes sealed
    const tr = h.trend("VM2-TT-111", T0, T0 + 24 * HOUR - 1, 2000);
    // 86,400 > 20,000: roll-ups; 1440 minutes ≤ 2000 points: one point per minute, a band each.
    expect(tr.source).toBe("rollup");
    expect(tr.points).toHaveLength(1440);
    const sealed = h.rollups("VM2-TT-111", T0, T0 + 24 * HOUR);
    expect(sealed.length).toBeGreaterThan(1430);
    sealed.forEach((r, i) => {
      expect(tr.points[i]).toEqual({ tMs: r.tMinuteMs, value: (r.sum as number) / r.count, min: r.min, max: r.max, quality: "good" });
    });
    // The unsealed last minutes are rolled up on the spot, from the same samples.
    const last = tr.points.at(-1);
    const lastRaw = h.samples("VM2-TT-111", T0 + 24 * HOUR - MIN, T0 + 24 * HOUR).map((p) => p.value as number);
    expect(last).toMatchObject({ tMs: T0 + 24 * HOUR - MIN, min: Math.min(...lastRaw), max: Math.max(...lastRaw) });
    expect(last?.value).toBeCloseTo(lastRaw.reduce((a, b) => a + b, 0) / lastRaw.length, 9);

    // Fewer points than minutes: LTTB over the minute means; the bands still show both extremes.
    const small = h.trend("VM2-TT-111", T0, T0 + 24 * HOUR - 1, 300);
    expect(small.source).toBe("rollup");
    expect(small.points).toHaveLength(300);
    expect(Math.max(...small.points.map((p) => p.max as number))).toBe(140.5);
    expect(Math.min(...small.points.map((p) => p.min as number))).toBe(12.25);
  });

  it("keeps a gap as a null point and reports the worst quality of what a point stands for", () => {
    const h = openHistorian();
    for (let s = 0; s < 3000; s++) {
      const lost = s >= 1000 && s < 1100;
      h.appendSample(sample("BF2-AT-213", T0 + s * 1000, lost ? Number.NaN : 11.5 + (s % 10) / 100, lost ? "bad" : s === 2500 ? "uncertain" : "good"));
    }
    h.flush();
    const tr = h.trend("BF2-AT-213", T0, T0 + 3_000_000, 300);
    expect(tr.source).toBe("raw");
    const gaps = tr.points.filter((p) => p.value === null);
    expect(gaps).toEqual([{ tMs: T0 + 1_000_000, value: null, quality: "bad" }]);
    // About `points`: the budget is shared by the two stretches around the gap.
    expect(tr.points.length).toBeGreaterThanOrEqual(295);
    expect(tr.points.length).toBeLessThanOrEqual(305);
    const around = tr.points.find((p, i) => p.tMs <= T0 + 2_500_000 && (tr.points[i + 1]?.tMs ?? Number.POSITIVE_INFINITY) > T0 + 2_500_000);
    expect(around?.quality).toBe("uncertain");
    // Points ascend in time.
    for (let i = 1; i < tr.points.length; i++) expect((tr.points[i]?.tMs as number) > (tr.points[i - 1]?.tMs as number)).toBe(true);
  });

  it("trends derived values with their status", () => {
    const h = openHistorian();
    for (let s = 0; s < 50; s++) h.appendDerived(derived("co.vm2-outlet.gradientPpmPerMin", T0 + s * 1000, s === 10 ? null : s / 10, s === 10 ? "unknown" : "ok"));
    h.flush();
    const tr = h.trend("co.vm2-outlet.gradientPpmPerMin", T0, T0 + 49_000, 100);
    expect(tr.points).toHaveLength(50);
    expect(tr.points[10]).toEqual({ tMs: T0 + 10_000, value: null, quality: "unknown" });
    expect(tr.points[11]).toEqual({ tMs: T0 + 11_000, value: 1.1, quality: "ok" });
  });

  it("fills the part whose raw data expired with roll-up bands", () => {
    const h = openHistorian({ rawRetentionDays: 1 / 24, rollupRetentionDays: 1 });
    fill(h, 3 * 3600);
    h.maintain(T0 + 3 * HOUR + MIN);
    // Raw kept for the last hour only (whole chunks); roll-ups for all three.
    const firstRaw = h.samples("VM2-TT-111", T0, T0 + 3 * HOUR, 1)[0]?.tMs as number;
    expect(firstRaw).toBeGreaterThan(T0 + HOUR);
    const tr = h.trend("VM2-TT-111", T0, T0 + 3 * HOUR, 4000);
    expect(tr.source).toBe("raw");
    const before = tr.points.filter((p) => p.tMs < firstRaw);
    expect(before.length).toBe((firstRaw - T0) / MIN);
    expect(before.every((p) => p.min !== undefined && p.max !== undefined)).toBe(true);
    expect(tr.points.filter((p) => p.tMs >= firstRaw)).toHaveLength((T0 + 3 * HOUR - firstRaw) / 1000);
  });

  it("gives nothing for an unknown series and rejects bad arguments", () => {
    const h = openHistorian();
    fill(h, 10);
    expect(h.trend("VM2-XX-999", T0, T0 + 10_000, 100)).toEqual({ source: "raw", points: [] });
    expect(() => h.trend("VM2-TT-111", T0, T0 + 10_000, 2)).toThrow("Historian.trend: expected points to be a whole number ≥ 3, found 2");
    expect(() => h.trend("VM2-TT-111", Number.NEGATIVE_INFINITY, T0, 100)).toThrow("Historian.trend: expected fromMs to be epoch milliseconds (a finite number), found -Infinity");
  });
});

describe("Historian.exportCsv", () => {
  it("writes the header and one line per sample in time order, RFC 3339 UTC with milliseconds", () => {
    const h = openHistorian();
    h.appendSample(sample("VM2-TT-111", T0 + 1000, 86.91));
    h.appendSample(sample("BF2-AT-214", T0 + 1000, 41.2, "uncertain"));
    h.appendSample(sample("VM2-TT-111", T0, -0));
    h.appendSample(sample("BF2-AT-214", T0 + 2500, Number.NaN, "bad"));
    h.appendSample(sample("VM2-FT-131", T0 + 2600, Number.POSITIVE_INFINITY, "good"));
    h.appendSample(sample('VM2 "north", inlet', T0 + 3000, 1e-7));
    h.flush();
    expect([...h.exportCsv(T0, T0 + 10_000)]).toEqual([
      "time,signal,value,quality",
      "2025-03-04T05:00:00.000Z,VM2-TT-111,-0,good",
      "2025-03-04T05:00:01.000Z,BF2-AT-214,41.2,uncertain",
      "2025-03-04T05:00:01.000Z,VM2-TT-111,86.91,good",
      "2025-03-04T05:00:02.500Z,BF2-AT-214,,bad",
      // The format allows an empty value only with quality bad (src/sources/csv.ts).
      "2025-03-04T05:00:02.600Z,VM2-FT-131,,bad",
      // RFC 4180 quoting: the field in quotes, a quote doubled.
      '2025-03-04T05:00:03.000Z,"VM2 ""north"", inlet",1e-7,good',
    ]);
    expect([...h.exportCsv(T0 + 1000, T0 + 2000, ["VM2-TT-111", "VM2-XX-999"])]).toEqual(["time,signal,value,quality", "2025-03-04T05:00:01.000Z,VM2-TT-111,86.91,good"]);
  });

  it("reads back through the format's reader to exactly the stored samples, sealed and unsealed", () => {
    const h = openHistorian();
    const names = ["VM2-TT-111", "VM2-AT-113", "BF2-AT-214", "FS2-TT-311"];
    for (let s = 0; s < 1800; s++) {
      names.forEach((n, i) => {
        if ((s + i) % 5 !== 0) h.appendSample(sample(n, T0 + s * 1000 + i * 7, tt(s + i * 100) * (i + 1) / 3, s % 333 === i ? "uncertain" : "good"));
      });
    }
    h.flush();
    h.maintain(T0 + 20 * MIN);
    expect(h.stats().recentRows).toBeGreaterThan(0);
    expect(h.stats().sealedRows).toBeGreaterThan(0);
    const lines = [...h.exportCsv(Number.NEGATIVE_INFINITY, Number.POSITIVE_INFINITY)];
    parseHistoryCsvHeader(lines[0] as string, 1, "export.csv");
    const parsed = lines.slice(1).map((l, i) => parseHistoryCsvLine(l, i + 2, "export.csv"));
    const byName = new Map<string, { tMs: number; value: number; quality: string }[]>();
    for (const p of parsed) {
      if (p === null) throw new Error("blank line in the export");
      if (!byName.has(p.signal)) byName.set(p.signal, []);
      byName.get(p.signal)?.push({ tMs: p.sourceTimeMs, value: p.value, quality: p.quality });
    }
    for (const n of names) {
      // ECMAScript Number::toString gives the shortest text that reads back to the same double.
      expect(byName.get(n)).toEqual(h.samples(n, Number.NEGATIVE_INFINITY, Number.POSITIVE_INFINITY).map((p) => ({ tMs: p.tMs, value: p.value, quality: p.quality })));
    }
    const times = parsed.map((p) => p?.sourceTimeMs as number);
    for (let i = 1; i < times.length; i++) expect(times[i] as number).toBeGreaterThanOrEqual(times[i - 1] as number);
  });

  it("streams: lines come one at a time from the file, not from a prepared copy", () => {
    const h = Historian.open({ path: join(dir, "stream.db"), sealIntervalS: 1, sealAgeS: 0 });
    fill(h, 7200);
    h.maintain(T0 + 3 * HOUR);
    const it = h.exportCsv(T0, T0 + 3 * HOUR);
    expect(Array.isArray(it)).toBe(false);
    expect(it.next().value).toBe("time,signal,value,quality");
    expect(it.next().value).toBe(`2025-03-04T05:00:00.000Z,VM2-TT-111,${tt(0)},good`);
    // Closed midway: the next line would need the file, so it fails with a clear error.
    h.close();
    expect(() => it.next()).toThrow(`Historian.exportCsv: the historian on "${join(dir, "stream.db")}" is closed`);
  });

  it("gives each point at most once while seals rewrite chunks under a running export", () => {
    const h = openHistorian();
    fill(h, 1200, "VM2-TT-111");
    fill(h, 1200, "BF2-TT-211");
    h.maintain(T0 + 10 * MIN);
    const it = h.exportCsv(T0, T0 + HOUR);
    const lines = [it.next().value, it.next().value, it.next().value] as string[];
    // Meanwhile: late points into sealed minutes (their chunks are rewritten), new points, a seal.
    for (let s = 0; s < 600; s++) h.appendSample(sample("VM2-TT-111", T0 + s * 1000 + 500, 1));
    for (let s = 1200; s < 1500; s++) h.appendSample(sample("BF2-TT-211", T0 + s * 1000, 2));
    h.flush();
    h.maintain(T0 + 30 * MIN);
    for (let r = it.next(); r.done !== true; r = it.next()) lines.push(r.value);
    const seen = new Set<string>();
    const last = new Map<string, number>();
    for (const line of lines.slice(1)) {
      const p = parseHistoryCsvLine(line, 0, "export.csv");
      if (p === null) throw new Error("blank line");
      const key = `${p.signal}@${p.sourceTimeMs}`;
      expect(seen.has(key), key).toBe(false);
      seen.add(key);
      expect(p.sourceTimeMs).toBeGreaterThan(last.get(p.signal) ?? Number.NEGATIVE_INFINITY);
      last.set(p.signal, p.sourceTimeMs);
    }
    // All that was there when it started is there.
    for (let s = 0; s < 1200; s++) {
      expect(seen.has(`VM2-TT-111@${T0 + s * 1000}`)).toBe(true);
      expect(seen.has(`BF2-TT-211@${T0 + s * 1000}`)).toBe(true);
    }
  });

  it("refuses times RFC 3339 cannot write and a bad list of signals", () => {
    const h = openHistorian();
    h.appendSample(sample("VM2-TT-111", -62_167_219_200_001, 1)); // a millisecond before 0000-01-01
    h.flush();
    expect(() => [...h.exportCsv(Number.NEGATIVE_INFINITY, Number.POSITIVE_INFINITY)]).toThrow("exportCsv: expected times within years 0000-9999");
    expect(() => h.exportCsv(T0, T0, "VM2-TT-111" as unknown as string[])).toThrow('Historian.exportCsv: expected signals to be an array of signal ids, found "VM2-TT-111"');
  });
});
