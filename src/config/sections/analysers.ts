// Config of the analysers whose health decides whether their signals can be trusted
// (src/analytics/health-monitor.ts). A signal belongs to an analyser through its own
// `analyser:` key; every such id must be declared here.
import { z } from "zod";
import { id, positive, text } from "./common.js";
import type { CheckContext } from "./context.js";

/**
 * The frozen window must hold at least this many expected updates of each signal, so that a
 * signal updating slowly is not called frozen for holding one sample (a design choice).
 */
export const FROZEN_WINDOW_MIN_PERIODS = 10;

export const analyserSchema = z.strictObject({
  id,
  name: text,
  /** No change larger than frozenEpsilon within this window while the plant runs = frozen, s. */
  frozenWindowS: positive,
  /** A change up to this size still counts as none, in each signal's canonical unit; set it below the finest resolution. */
  frozenEpsilon: z.number().nonnegative(),
  /** The analyser's 4-20 mA loop current, unit mA: checked against the NAMUR NE 43 failure bands. */
  loopCurrentSignal: id.optional(),
  /** The analyser's status, unit "state": non-zero = in function check (NAMUR NE 107 category C). */
  functionCheckSignal: id.optional(),
  /**
   * After a function check ends, the readings stay untrusted this long, s: check gas or
   * blowback air still in the cell and the sample line (an extractive analyser's flush time).
   */
  settleS: z.number().nonnegative().default(0),
  /**
   * The mill whose operating phase says whether the plant runs (starting, grinding, stopping):
   * only then must a value move, so only then is a flat value frozen. Without it, or while the
   * phase is unknown, the plant is taken as running (the cautious side).
   */
  phaseUnit: id.optional(),
});

export const analysersSection = {
  analysers: z.array(analyserSchema).default([]),
};

export type AnalyserConfig = z.infer<typeof analyserSchema>;

interface SignalLike {
  id: string;
  unit: string;
  expectedPeriodS: number;
  analyser?: string | undefined;
}
interface UnitLike {
  id: string;
  phase?: unknown;
}

export function checkAnalysers(cfg: { analysers: AnalyserConfig[]; signals: SignalLike[]; units: UnitLike[] }, ctx: CheckContext): void {
  const declared = new Map<string, number>();
  cfg.analysers.forEach((a, i) => {
    const first = declared.get(a.id);
    if (first !== undefined) ctx.problem(["analysers", i, "id"], `duplicate id "${a.id}" (first used at analysers[${first}])`);
    else declared.set(a.id, i);
  });
  const signalById = new Map(cfg.signals.map((s) => [s.id, s]));
  const ids = [...declared.keys()];
  cfg.signals.forEach((s, i) => {
    if (s.analyser !== undefined && !declared.has(s.analyser)) {
      ctx.problem(
        ["signals", i, "analyser"],
        `unknown analyser "${s.analyser}": expected one of the ids under analysers (${ids.length ? ids.join(", ") : "none declared"})`,
      );
    }
  });
  cfg.analysers.forEach((a, i) => {
    const members = cfg.signals.filter((s) => s.analyser === a.id);
    if (members.length === 0) ctx.problem(["analysers", i, "id"], `no signal names analyser "${a.id}": expected at least one signal with analyser: ${a.id}`);
    const slowest = members.reduce<SignalLike | null>((m, s) => (m === null || s.expectedPeriodS > m.expectedPeriodS ? s : m), null);
    if (slowest && a.frozenWindowS < FROZEN_WINDOW_MIN_PERIODS * slowest.expectedPeriodS) {
      ctx.problem(
        ["analysers", i, "frozenWindowS"],
        `expected at least ${FROZEN_WINDOW_MIN_PERIODS} expected periods of signal "${slowest.id}" (${FROZEN_WINDOW_MIN_PERIODS * slowest.expectedPeriodS} s); found ${a.frozenWindowS} s`,
      );
    }
    const special = [
      { key: "loopCurrentSignal", sid: a.loopCurrentSignal, unit: "mA", what: "mA (the loop current)" },
      { key: "functionCheckSignal", sid: a.functionCheckSignal, unit: "state", what: 'unit "state" (non-zero = in function check)' },
    ] as const;
    for (const { key, sid, unit, what } of special) {
      if (!sid) continue;
      ctx.needSignal(["analysers", i, key], sid);
      const s = signalById.get(sid);
      if (!s) continue;
      if (s.unit !== unit) ctx.problem(["analysers", i, key], `signal "${sid}" is in ${s.unit}, expected ${what}`);
      if (s.analyser !== undefined) {
        ctx.problem(["analysers", i, key], `signal "${sid}" carries analyser: ${s.analyser}; a ${key} belongs to its analyser through this key alone: remove its analyser key`);
      }
    }
    if (a.phaseUnit !== undefined) {
      ctx.needUnit(["analysers", i, "phaseUnit"], a.phaseUnit);
      const u = cfg.units.find((x) => x.id === a.phaseUnit);
      if (u && !u.phase) ctx.problem(["analysers", i, "phaseUnit"], `unit "${a.phaseUnit}" has no phase configured: expected a mill with units[].phase`);
    }
  });
}
