// Retention, the disk budget and giving space back, on a fake clock (maintain takes nowMs).
// Free pages and auto_vacuum: sqlite.org/pragma.html#pragma_freelist_count,
// #pragma_auto_vacuum, #pragma_incremental_vacuum.
import { join } from "node:path";
import Database from "better-sqlite3";
import fc from "fast-check";
import { afterEach, beforeEach, describe, expect, it } from "vitest";
import { Historian, type HistorianOptions } from "../../src/store/historian.js";
import { T0, sample, tempDir } from "./helpers.js";

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
const DAY = 86_400_000;

function openHistorian(extra: Partial<HistorianOptions> = {}): Historian {
  const h = Historian.open({ path: join(dir, "hist.db"), ...extra });
  open.push(h);
  return h;
}

function peek<T>(fn: (db: Database.Database) => T): T {
  const db = new Database(join(dir, "hist.db"), { readonly: true, fileMustExist: true });
  try {
    return fn(db);
  } finally {
    db.close();
  }
}

/** Noisy full-precision values (no decimal form), so that chunks take real space. */
const noisy = (i: number): number => 50 + Math.sin(i * 0.7) * 10 + ((i * 2654435761) % 1000) / 997;

describe("Historian retention", () => {
  it("never deletes data younger than its retention period, and deletes what expired", () => {
    fc.assert(
      fc.property(
        fc.array(fc.record({ signal: fc.integer({ min: 0, max: 1 }), tMs: fc.integer({ min: 0, max: 3 * DAY }) }), { minLength: 1, maxLength: 400 }),
        fc.integer({ min: 1, max: 48 }),
        fc.integer({ min: 0, max: 48 }),
        fc.array(fc.integer({ min: 1, max: 12 * HOUR }), { minLength: 1, maxLength: 20 }),
        (rows, rawHours, extraHours, steps) => {
          cleanup();
          ({ dir, cleanup } = tempDir());
          const rawMs = rawHours * HOUR;
          const rollupMs = (rawHours + extraHours) * HOUR;
          const h = openHistorian({ sealIntervalS: 1, sealAgeS: 0, rawRetentionDays: rawMs / DAY, rollupRetentionDays: rollupMs / DAY });
          const names = ["VM2-TT-111", "VM2-AT-113"];
          const model = new Map<string, Map<number, number>>();
          rows.forEach((r, i) => {
            const name = names[r.signal] as string;
            h.appendSample(sample(name, T0 + r.tMs, i));
            if (!model.has(name)) model.set(name, new Map());
            model.get(name)?.set(T0 + r.tMs, i);
          });
          let now = T0;
          for (const step of steps) {
            now += step;
            expect(h.maintain(now).error).toBeNull();
            for (const name of names) {
              const got = new Map(h.samples(name, Number.NEGATIVE_INFINITY, Number.POSITIVE_INFINITY).map((p) => [p.tMs, p.value]));
              for (const [t, v] of model.get(name) ?? []) {
                // Younger than the raw period: always there, with its value.
                if (t >= now - rawMs) expect(got.get(t), `${name} at ${t - T0} ms, now ${now - T0}`).toBe(v);
                // Whatever is there is what was written.
                if (got.has(t)) expect(got.get(t)).toBe(v);
              }
              // Sealed minutes younger than the roll-up period keep their roll-up.
              const sealedBefore = Math.floor(now / MIN) * MIN;
              const minutes = new Set([...(model.get(name)?.keys() ?? [])].map((t) => Math.floor(t / MIN) * MIN));
              const rolled = new Set(h.rollups(name, Number.NEGATIVE_INFINITY, Number.POSITIVE_INFINITY).map((r) => r.tMinuteMs));
              for (const m of minutes) if (m < sealedBefore && m + MIN > now - rollupMs) expect(rolled.has(m), `roll-up of minute ${m - T0}`).toBe(true);
            }
            // And what expired is gone: no chunk ends before the raw cut, no roll-up minute ended before its cut.
            const left = peek((db) => ({
              chunks: db.prepare("SELECT count(*) FROM chunks WHERE t_last_ms < ?").pluck().get(now - rawMs) as number,
              rollups: db.prepare("SELECT count(*) FROM rollups_1m WHERE t_minute_ms + 60000 <= ?").pluck().get(now - rollupMs) as number,
            }));
            expect(left).toEqual({ chunks: 0, rollups: 0 });
          }
          h.close();
          open.splice(open.indexOf(h), 1);
        },
      ),
      { numRuns: 40 },
    );
  }, 120_000);

  it("rejects retention settings that make no sense, saying why", () => {
    expect(() => openHistorian({ rawRetentionDays: 0 })).toThrow("expected options.rawRetentionDays to be a positive number of days, found 0");
    expect(() => openHistorian({ rawRetentionDays: 30, rollupRetentionDays: 7 })).toThrow(
      "expected options.rollupRetentionDays (7) to be at least rawRetentionDays (30): roll-ups outlive the raw data",
    );
    expect(() => openHistorian({ maxDatabaseBytes: -5 })).toThrow("expected options.maxDatabaseBytes to be a whole number ≥ 1, found -5");
  });
});

describe("Historian disk budget", () => {
  /** Four hours of two noisy signals at 1 Hz, sealed every five minutes as a running daemon would. */
  function fourHours(): void {
    const h = Historian.open({ path: join(dir, "hist.db"), rawRetentionDays: 1, rollupRetentionDays: 2 });
    for (let k = 0; k < 48; k++) {
      for (let s = 0; s < 300; s++) {
        const t = T0 + (k * 300 + s) * 1000;
        h.appendSample(sample("VM2-TT-111", t, noisy(k * 300 + s)));
        h.appendSample(sample("BF2-TT-211", t, noisy(k * 300 + s + 7)));
      }
      h.maintain(T0 + (k + 1) * 5 * MIN + MIN);
    }
    h.close();
  }
  const chunkEnds = (): number[] => peek((db) => db.prepare("SELECT t_last_ms FROM chunks ORDER BY t_last_ms").pluck().all() as number[]);
  const rollupMinutes = (): number[] => peek((db) => db.prepare("SELECT t_minute_ms FROM rollups_1m ORDER BY t_minute_ms").pluck().all() as number[]);

  it("prunes expired raw chunks oldest first, then expired roll-ups oldest first, and stops once within budget", () => {
    fourHours();
    const allChunks = chunkEnds();
    const allRollups = rollupMinutes();
    expect(allChunks.length).toBe(96);
    expect(allRollups.length).toBe(2 * 240);
    const now = T0 + 4 * HOUR + MIN;
    const rawCut = now - HOUR;
    const rollupCut = now - 2 * HOUR;
    const expiredChunks = allChunks.filter((t) => t < rawCut);

    // Retention shortened to 1 h raw, 2 h roll-ups; 10 rows per step, no budget: one step.
    let h = openHistorian({ rawRetentionDays: 1 / 24, rollupRetentionDays: 2 / 24, pruneStepRows: 10 });
    expect(h.maintain(now)).toMatchObject({ prunedChunks: 10, prunedRollups: 0, overBudget: false, error: null });
    expect(chunkEnds()).toEqual(allChunks.slice(10));
    expect(rollupMinutes()).toEqual(allRollups);

    // A budget just below the data: one more step (the 10 next oldest chunks) frees pages enough.
    const used = h.stats().dataBytes as number;
    h.close();
    open.length = 0;
    h = openHistorian({ rawRetentionDays: 1 / 24, rollupRetentionDays: 2 / 24, pruneStepRows: 10, maxDatabaseBytes: used - 4096 });
    const r = h.maintain(now);
    expect(r).toMatchObject({ prunedChunks: 10, prunedRollups: 0, overBudget: false });
    expect(chunkEnds()).toEqual(allChunks.slice(20));
    expect(h.stats().dataBytes as number).toBeLessThanOrEqual(used - 4096);

    // A budget that cannot be met: every expired chunk goes, then every expired roll-up, the
    // oldest first; nothing younger than its period; "over budget".
    h.close();
    open.length = 0;
    h = openHistorian({ rawRetentionDays: 1 / 24, rollupRetentionDays: 2 / 24, pruneStepRows: 10, maxDatabaseBytes: 4096 });
    const r2 = h.maintain(now);
    expect(r2.overBudget).toBe(true);
    expect(r2.prunedChunks).toBe(expiredChunks.length - 20);
    expect(chunkEnds()).toEqual(allChunks.filter((t) => t >= rawCut));
    expect(rollupMinutes()).toEqual(allRollups.filter((m) => m + MIN > rollupCut));
    expect(h.stats()).toMatchObject({ overBudget: true, state: "ok", maxDatabaseBytes: 4096 });
    // The young raw data is whole.
    const young = h.samples("VM2-TT-111", T0 + 3 * HOUR + 5 * MIN, T0 + 4 * HOUR - 1);
    expect(young).toHaveLength(55 * 60);
    expect(young.every((p, i) => p.value === noisy(3 * 3600 + 5 * 60 + i))).toBe(true);
  });

  it("gives free pages back in steps of vacuumStepPages, keeping the reserve", () => {
    fourHours();
    const h = openHistorian({ rawRetentionDays: 1 / 24, rollupRetentionDays: 2 / 24, vacuumStepPages: 8, vacuumReservePages: 4 });
    expect(h.stats().autoVacuum).toBe("incremental");
    const pagesBefore = peek((db) => db.pragma("page_count", { simple: true }) as number);
    const r = h.maintain(T0 + 4 * HOUR + MIN);
    expect(r.prunedChunks).toBeGreaterThan(0);
    expect(r.vacuumedPages).toBe(8);
    let free = peek((db) => db.pragma("freelist_count", { simple: true }) as number);
    expect(peek((db) => db.pragma("page_count", { simple: true }) as number)).toBe(pagesBefore - 8);
    // Further calls go on in steps of 8 down to the reserve of 4 free pages.
    for (let i = 0; i < 200 && free > 4; i++) {
      expect(h.maintain(T0 + 4 * HOUR + MIN).vacuumedPages).toBe(Math.min(8, free - 4));
      free = peek((db) => db.pragma("freelist_count", { simple: true }) as number);
    }
    expect(free).toBe(4);
    expect(h.stats().fileBytes).toBe(peek((db) => (db.pragma("page_count", { simple: true }) as number) * 4096));
  });
});
