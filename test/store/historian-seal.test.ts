// Sealing: recent rows become compressed chunks and 1-minute roll-ups, in one transaction per
// seal. The oracle is a plain model of what was written: per series, time → the last write.
import { join } from "node:path";
import Database from "better-sqlite3";
import fc from "fast-check";
import { afterEach, beforeEach, describe, expect, it } from "vitest";
import type { Quality } from "../../src/core/types.js";
import { Historian, type HistorianOptions } from "../../src/store/historian.js";
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

function openHistorian(extra: Partial<HistorianOptions> = {}, file = "hist.db"): Historian {
  const h = Historian.open({ path: join(dir, file), ...extra });
  open.push(h);
  return h;
}

function peek<T>(fn: (db: Database.Database) => T, file = "hist.db"): T {
  const db = new Database(join(dir, file), { readonly: true, fileMustExist: true });
  try {
    return fn(db);
  } finally {
    db.close();
  }
}

const SIGNALS = ["VM2-TT-111", "BF2-AT-214", "FS2-TT-311"];
const QUALITIES: Quality[] = ["good", "uncertain", "bad"];
const MIN = 60_000;

// Values a historian must give back: decimals as transmitters report them, and the awkward
// binary64 cases (IEEE 754): −0, subnormals, the extremes, and the non-finite ones it keeps as null.
const value = fc.oneof(
  fc.integer({ min: -200_000, max: 200_000 }).map((m) => m / 100),
  fc.double({ noNaN: true, noDefaultInfinity: true }),
  fc.constantFrom(-0, 0, 5e-324, -5e-324, Number.MAX_VALUE, -Number.MAX_VALUE, 2.2250738585072014e-308, Number.NaN, Number.POSITIVE_INFINITY, Number.NEGATIVE_INFINITY),
);

type Op =
  | { op: "append"; signal: number; tMs: number; value: number; quality: number }
  | { op: "flush" }
  | { op: "maintain"; advanceMs: number };

const ops: fc.Arbitrary<Op[]> = fc.array(
  fc.oneof(
    { weight: 8, arbitrary: fc.record({ op: fc.constant("append" as const), signal: fc.integer({ min: 0, max: 2 }), tMs: fc.integer({ min: 0, max: 30 * MIN }), value, quality: fc.integer({ min: 0, max: 2 }) }) },
    { weight: 1, arbitrary: fc.constant({ op: "flush" as const }) },
    { weight: 1, arbitrary: fc.record({ op: fc.constant("maintain" as const), advanceMs: fc.integer({ min: 0, max: 10 * MIN }) }) },
  ),
  { maxLength: 250 },
);

/** What reading must give: the last write per time, non-finite as null. */
type Model = Map<string, Map<number, { value: number | null; quality: Quality }>>;

function expectMatches(h: Historian, model: Model): void {
  for (const sig of SIGNALS) {
    const want = [...(model.get(sig) ?? new Map()).entries()].sort((a, b) => a[0] - b[0]);
    const got = h.samples(sig, Number.NEGATIVE_INFINITY, Number.POSITIVE_INFINITY);
    expect(got.map((p) => p.tMs)).toEqual(want.map(([t]) => t));
    for (const [i, [, w]] of want.entries()) {
      const g = got[i] as { value: number | null; quality: Quality };
      // Object.is: −0 must stay −0, and every finite value bit for bit.
      expect(Object.is(g.value, w.value), `${sig} point ${i}: ${String(g.value)} vs ${String(w.value)}`).toBe(true);
      expect(g.quality).toBe(w.quality);
    }
  }
}

describe("Historian sealing", () => {
  it("reads back the last write of every point, sealed or not, and after reopening", () => {
    fc.assert(
      fc.property(ops, (list) => {
        cleanup();
        ({ dir, cleanup } = tempDir());
        const h = openHistorian({ sealIntervalS: 1, sealAgeS: 0 });
        const model: Model = new Map();
        let now = T0;
        for (const o of list) {
          if (o.op === "append") {
            const sig = SIGNALS[o.signal] as string;
            const tMs = T0 + o.tMs;
            h.appendSample(sample(sig, tMs, o.value, QUALITIES[o.quality]));
            if (!model.has(sig)) model.set(sig, new Map());
            model.get(sig)?.set(tMs, { value: Number.isFinite(o.value) ? o.value : null, quality: QUALITIES[o.quality] as Quality });
          } else if (o.op === "flush") h.flush();
          else {
            now += o.advanceMs;
            expect(h.maintain(now).error).toBeNull();
          }
        }
        h.flush();
        expectMatches(h, model);
        const s = h.stats();
        expect(s.state).toBe("ok");
        // Every stored point is either sealed or unsealed, once.
        const stored = peek((db) => ({
          sealed: db.prepare("SELECT coalesce(sum(n), 0) FROM chunks").pluck().get() as number,
          recentDistinct: db.prepare("SELECT count(*) FROM (SELECT DISTINCT series_id, t_ms FROM recent)").pluck().get() as number,
        }));
        const points = [...model.values()].reduce((n, m) => n + m.size, 0);
        expect(stored.sealed + stored.recentDistinct).toBe(points);
        expect(s.recentRows).toBe(stored.recentDistinct);
        // Reopened: the unsealed copy is rebuilt from the file.
        h.close();
        const h2 = openHistorian();
        expectMatches(h2, model);
        // Sealing everything now changes nothing that reads see.
        h2.maintain(T0 + 24 * 3_600_000);
        expect(h2.stats().recentRows).toBe(0);
        expectMatches(h2, model);
      }),
      { numRuns: 30 },
    );
  }, 120_000);

  it("seals whole minutes older than the horizon and leaves the rest in the recent table", () => {
    const h = openHistorian({ sealIntervalS: 300, sealAgeS: 60 });
    for (let s = 0; s < 600; s++) h.appendSample(sample("VM2-TT-111", T0 + s * 1000, 80 + s / 100));
    // Horizon: minute of (now − 60 s) = minute of T0 + 8:30 → T0 + 8:00.
    const r = h.maintain(T0 + 9 * MIN + 30_000);
    expect(r).toMatchObject({ sealedRows: 480, error: null });
    expect(peek((db) => db.prepare("SELECT min(t_ms) FROM recent").pluck().get())).toBe(T0 + 8 * MIN);
    expect(peek((db) => db.prepare("SELECT max(t_last_ms) FROM chunks").pluck().get())).toBe(T0 + 8 * MIN - 1000);
    // Within sealIntervalS of the last seal nothing more is sealed.
    expect(h.maintain(T0 + 12 * MIN).sealedRows).toBe(0);
    expect(h.maintain(T0 + 14 * MIN + 30_000).sealedRows).toBe(120);
    expect(h.stats()).toMatchObject({ sealedRows: 600, recentRows: 0, lastSealMs: T0 + 14 * MIN + 30_000 });
    expect(h.samples("VM2-TT-111", T0, T0 + 600_000)).toHaveLength(600);
  });

  it("merges a late point into the sealed chunk of its minute and recomputes that minute's roll-up", () => {
    const h = openHistorian({ sealIntervalS: 1, sealAgeS: 0 });
    for (let s = 0; s < 180; s++) h.appendSample(sample("BF2-TT-211", T0 + s * 1000, 40));
    h.maintain(T0 + 3 * MIN);
    expect(h.rollups("BF2-TT-211", T0, T0 + 3 * MIN).map((r) => r.count)).toEqual([60, 60, 60]);
    // Late: a new point between two sealed ones, and a rewrite of a sealed point.
    h.appendSample(sample("BF2-TT-211", T0 + 60_500, 46));
    h.appendSample(sample("BF2-TT-211", T0 + 61_000, 34, "uncertain"));
    h.maintain(T0 + 4 * MIN);
    const minute1 = h.samples("BF2-TT-211", T0 + MIN, T0 + 2 * MIN - 1);
    expect(minute1).toHaveLength(61);
    expect(minute1.slice(0, 3)).toEqual([
      { tMs: T0 + 60_000, value: 40, quality: "good" },
      { tMs: T0 + 60_500, value: 46, quality: "good" },
      { tMs: T0 + 61_000, value: 34, quality: "uncertain" },
    ]);
    expect(h.rollups("BF2-TT-211", T0 + MIN, T0 + MIN)).toEqual([
      { tMinuteMs: T0 + MIN, min: 34, max: 46, sum: 40 * 59 + 46 + 34, count: 61, last: 40, quality: "uncertain" },
    ]);
    // The minutes around it are untouched; the chunks of the series still never overlap.
    expect(h.rollups("BF2-TT-211", T0, T0 + 3 * MIN).map((r) => r.count)).toEqual([60, 61, 60]);
    const chunks = peek((db) => db.prepare("SELECT t_first_ms, t_last_ms FROM chunks ORDER BY t_first_ms").raw().all()) as [number, number][];
    for (let i = 1; i < chunks.length; i++) expect((chunks[i] as [number, number])[0]).toBeGreaterThan((chunks[i - 1] as [number, number])[1]);
    expect(h.stats().duplicateRows).toBe(1);
  });

  it("seals derived values with their status, and roll-ups leave out unknown ones", () => {
    const h = openHistorian({ sealIntervalS: 1, sealAgeS: 0 });
    const key = "dewpoint.bf1-outlet.marginK";
    h.appendDerived(derived(key, T0, 21.5));
    h.appendDerived(derived(key, T0 + 1000, null, "unknown"));
    h.appendDerived(derived(key, T0 + 2000, 19.25));
    h.appendDerived(derived(key, T0 + 3000, 99, "unknown")); // a value with status unknown is not usable
    h.maintain(T0 + 10 * MIN);
    expect(h.stats().recentRows).toBe(0);
    expect(h.derived(key, T0, T0 + 3000)).toEqual([
      { tMs: T0, value: 21.5, status: "ok" },
      { tMs: T0 + 1000, value: null, status: "unknown" },
      { tMs: T0 + 2000, value: 19.25, status: "ok" },
      { tMs: T0 + 3000, value: 99, status: "unknown" },
    ]);
    expect(h.rollups(key, T0, T0)).toEqual([{ tMinuteMs: T0, min: 19.25, max: 21.5, sum: 40.75, count: 2, last: 19.25, quality: "unknown" }]);
  });

  it("computes roll-ups equal to the aggregates of the raw points, late points included", () => {
    fc.assert(
      fc.property(
        fc.array(fc.record({ signal: fc.integer({ min: 0, max: 1 }), tMs: fc.integer({ min: 0, max: 12 * MIN }), value, quality: fc.integer({ min: 0, max: 2 }) }), { minLength: 1, maxLength: 300 }),
        fc.integer({ min: 0, max: 300 }),
        (rows, split) => {
          const h = Historian.open({ path: ":memory:", sealIntervalS: 1, sealAgeS: 0 });
          try {
            // Two seals: the rows after `split` arrive late, into minutes already sealed.
            rows.forEach((r, i) => {
              h.appendSample(sample(SIGNALS[r.signal] as string, T0 + r.tMs, r.value, QUALITIES[r.quality]));
              if (i === split) h.maintain(T0 + 20 * MIN);
            });
            h.maintain(T0 + 40 * MIN);
            for (const sig of SIGNALS.slice(0, 2)) {
              const raw = h.samples(sig, Number.NEGATIVE_INFINITY, Number.POSITIVE_INFINITY);
              const byMinute = new Map<number, typeof raw>();
              for (const p of raw) {
                const m = Math.floor(p.tMs / MIN) * MIN;
                if (!byMinute.has(m)) byMinute.set(m, []);
                byMinute.get(m)?.push(p);
              }
              // Direct: over the usable values (present, quality not bad), summed in time order.
              // Roll-ups are REAL columns, which store −0 as 0 (measured with the bundled SQLite 3.53.2).
              const z = (v: number | null): number | null => (v === 0 ? 0 : v);
              const expected = [...byMinute].map(([m, pts]) => {
                const use = pts.filter((p) => p.value !== null && p.quality !== "bad").map((p) => p.value as number);
                let sum: number | null = null;
                for (const v of use) sum = sum === null ? v : sum + v;
                const worst = pts.some((p) => p.quality === "bad") ? "bad" : pts.some((p) => p.quality === "uncertain") ? "uncertain" : "good";
                return {
                  tMinuteMs: m,
                  min: z(use.length ? use.reduce((a, b) => (b < a ? b : a)) : null),
                  max: z(use.length ? use.reduce((a, b) => (b > a ? b : a)) : null),
                  sum: z(sum),
                  count: use.length,
                  last: z(use.length ? (use.at(-1) as number) : null),
                  quality: worst,
                };
              });
              expect(h.rollups(sig, Number.NEGATIVE_INFINITY, Number.POSITIVE_INFINITY)).toEqual(expected);
            }
          } finally {
            h.close();
          }
        },
      ),
      { numRuns: 60 },
    );
  }, 60_000);

  it("seals by the data's own clock when the unsealed rows exceed maxRecentRows", () => {
    const h = openHistorian({ maxRecentRows: 1000, sealAgeS: 60 });
    for (let s = 0; s < 1200; s++) h.appendSample(sample("VM2-AT-113", T0 + s * 1000, 9.5));
    h.flush();
    // Newest point at T0 + 19:59; horizon = minute of (T0 + 18:59) = T0 + 18:00.
    expect(h.stats()).toMatchObject({ sealedRows: 18 * 60, recentRows: 120, state: "ok" });
    expect(h.samples("VM2-AT-113", T0, T0 + 1_200_000)).toHaveLength(1200);
  });

  it("rejects a nowMs that is not a time", () => {
    const h = openHistorian();
    expect(() => h.maintain(Number.NaN)).toThrow("Historian.maintain: expected nowMs to be epoch milliseconds (a finite number), found NaN (the time to maintain at)");
  });
});
