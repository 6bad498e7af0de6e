// Config of each unit's oxygen limit, the analysers behind it, the O2 trend and the purge.
import { z } from "zod";
import { id, positive } from "./common.js";
import type { CheckContext, QuantityInfo } from "./context.js";
import { nfpa69LimitPctVol } from "../../physics/oxygen.js";

const origin = z.string().min(3);
const basis = z.enum(["wet", "dry"]);
/** O2 of a limit or a gas, % vol: above 0 and below that of air. */
const o2PctVol = z.number().gt(0).lt(21);

export const oxygenSchema = z.strictObject({
  /** One O2 analyser. Give either `signal` or `signals`, not both. */
  signal: id.optional(),
  /** Redundant O2 analysers at the same point (all on one basis); their vote is used. */
  signals: z.array(id).min(2).optional(),
  /** How the redundant readings make one value (src/analytics/voting.ts); highest is the safe side for O2. */
  voting: z.enum(["highest", "median", "2oo3"]).optional(),
  /** Spread between trusted redundant readings above which they are flagged as disagreeing, percentage points. */
  disagreeLimitPctPt: positive.optional(),
  /** H2O signal (vol % wet) used to convert between wet and dry basis when the O2 and limit bases differ. */
  h2oSignal: id.optional(),
  siteMaximum: z.strictObject({ pctVol: o2PctVol, basis, origin }).optional(),
  loc: z
    .strictObject({
      pctVol: o2PctVol,
      basis: basis.default("dry"),
      monitoring: z.enum(["continuous", "periodic"]),
      origin,
      /**
       * Extra percentage points taken off the LOC-based limit because the LOC falls as the
       * temperature rises. There is no general correlation for that fall (it depends on the
       * coal and the test): the site should use an LOC tested (EN 14034-4) at its maximum
       * process temperature, and use this allowance only while it has none.
       */
      temperatureAllowancePctPt: positive.optional(),
      /** Where the allowance comes from; required with temperatureAllowancePctPt. */
      temperatureAllowanceOrigin: origin.optional(),
    })
    .optional(),
  marginalBandPctPt: positive.default(1.5),
  /** The O2 trend is a least-squares line over this window, s. */
  trendWindowS: positive.default(300),
  /** A gap between O2 points longer than this restarts the trend (no trend across a gap), s. */
  trendMaxGapS: positive.default(30),
  /**
   * Purge of the unit with inert gas. The O2 values here are on the O2 analysers' basis.
   * The unit is "purging" while the inert flow is above flowOnNm3PerH and the measured O2
   * is not yet below the limit by the marginal band; counted volume changes never make it inert.
   */
  purge: z
    .strictObject({
      /** Free gas volume of the unit and its loop, m³. */
      volumeM3: positive,
      /** Inert gas flow into the unit, Nm³/h. */
      inertFlowSignal: id,
      /** O2 in the inert gas, % vol (0 for pure N2). */
      inertO2PctVol: z.number().min(0).lt(21),
      /** O2 the purge aims for, % vol (above inertO2PctVol, below the limit). */
      targetO2PctVol: o2PctVol,
      /** Inert flow above which the unit is being purged, Nm³/h (above the meter's low-flow noise). */
      flowOnNm3PerH: positive,
    })
    .optional(),
});

export type OxygenConfig = z.infer<typeof oxygenSchema>;
export type OxygenPurgeConfig = NonNullable<OxygenConfig["purge"]>;

/** The O2 signal ids of a unit, in config order (one for `signal`, the list for `signals`). */
export function o2SignalIds(o: OxygenConfig): string[] {
  return o.signals ?? (o.signal ? [o.signal] : []);
}

interface UnitLike {
  id: string;
  name: string;
  oxygen?: OxygenConfig | undefined;
}
interface SignalLike {
  id: string;
  unit: string;
  basis?: "wet" | "dry" | undefined;
}

export function checkOxygen(cfg: { units: UnitLike[]; signals: SignalLike[] }, ctx: CheckContext): void {
  const signalById = new Map(cfg.signals.map((s) => [s.id, s]));
  cfg.units.forEach((u, i) => {
    const o = u.oxygen;
    if (!o) return;
    const at = (...p: (string | number)[]) => ["units", i, "oxygen", ...p];

    // One analyser or several, not both and not neither.
    if (o.signal !== undefined && o.signals !== undefined) {
      ctx.problem(at("signals"), `expected either signal (one analyser) or signals (redundant analysers), not both; found signal "${o.signal}" and signals [${o.signals.join(", ")}]`);
    } else if (o.signal === undefined && o.signals === undefined) {
      ctx.problem(at(), "expected signal (one O2 analyser) or signals (a list of redundant O2 analysers); found neither");
    }
    if (o.signals === undefined) {
      if (o.voting !== undefined) ctx.problem(at("voting"), `voting applies to redundant analysers under signals; this unit has one analyser (signal "${o.signal ?? ""}")`);
      if (o.disagreeLimitPctPt !== undefined) ctx.problem(at("disagreeLimitPctPt"), "disagreeLimitPctPt applies to redundant analysers under signals; this unit has one analyser");
    } else {
      const seen = new Set<string>();
      o.signals.forEach((sid, k) => {
        if (seen.has(sid)) ctx.problem(at("signals", k), `signal "${sid}" is listed twice: redundant analysers must be different signals`);
        seen.add(sid);
      });
      if (o.voting === undefined) ctx.problem(at("signals"), "expected voting (highest, median or 2oo3) with redundant analysers under signals");
      if (o.disagreeLimitPctPt === undefined) ctx.problem(at("signals"), "expected disagreeLimitPctPt (percentage points) with redundant analysers under signals");
      if (o.voting === "2oo3" && o.signals.length !== 3) ctx.problem(at("signals"), `2oo3 voting takes exactly 3 analysers; found ${o.signals.length}`);
    }

    // Every O2 signal declares its basis, and redundant ones share it.
    const ids = o2SignalIds(o);
    const idPath = (k: number) => (o.signals ? at("signals", k) : at("signal"));
    ids.forEach((sid, k) => {
      ctx.needSignal(idPath(k), sid, "concentration-pct", "% vol (pctVol)");
      const s = signalById.get(sid);
      if (s && !s.basis) ctx.problem(idPath(k), `O2 signal "${sid}" must declare its basis (wet or dry) under signals`);
    });
    const bases = new Map(ids.flatMap((sid) => (signalById.get(sid)?.basis ? [[sid, signalById.get(sid)!.basis!] as const] : [])));
    if (new Set(bases.values()).size > 1) {
      ctx.problem(at("signals"), `redundant O2 analysers must read on one basis to be voted; found ${[...bases].map(([s, b]) => `${s} ${b}`).join(", ")}`);
    }
    const o2Basis = bases.size ? [...bases.values()][0] : undefined;

    if (!o.siteMaximum && !o.loc) ctx.problem(at(), "expected a siteMaximum, a loc, or both: a unit's O2 needs a limit");
    if (o.h2oSignal) ctx.needSignal(at("h2oSignal"), o.h2oSignal, "concentration-pct", "% vol (pctVol)");
    const limitBases = [o.siteMaximum?.basis, o.loc?.basis].filter(Boolean);
    if (o2Basis && limitBases.some((b) => b !== o2Basis) && !o.h2oSignal) {
      ctx.problem(at(), `the O2 signal reads ${o2Basis} but a limit is on another basis: expected h2oSignal for the wet/dry conversion`);
    }

    // The LOC-based limit with its temperature allowance must stay positive.
    if (o.loc?.temperatureAllowancePctPt !== undefined) {
      const before = nfpa69LimitPctVol(o.loc.pctVol, o.loc.monitoring);
      if (!(before - o.loc.temperatureAllowancePctPt > 0)) {
        ctx.problem(
          at("loc", "temperatureAllowancePctPt"),
          `expected an allowance below the NFPA 69 limit of ${round(before)} % (LOC ${o.loc.pctVol} %, ${o.loc.monitoring} monitoring); found ${o.loc.temperatureAllowancePctPt} %-pt, which leaves no positive limit`,
        );
      }
      if (o.loc.temperatureAllowanceOrigin === undefined) ctx.problem(at("loc"), "expected temperatureAllowanceOrigin with temperatureAllowancePctPt: record where the allowance comes from");
    } else if (o.loc?.temperatureAllowanceOrigin !== undefined) {
      ctx.problem(at("loc", "temperatureAllowanceOrigin"), "temperatureAllowanceOrigin given without temperatureAllowancePctPt");
    }

    if (!(o.trendMaxGapS < o.trendWindowS)) {
      ctx.problem(at("trendMaxGapS"), `expected a gap limit shorter than the trend window (${o.trendWindowS} s); found ${o.trendMaxGapS} s`);
    }

    const p = o.purge;
    if (p) {
      ctx.needSignal(at("purge", "inertFlowSignal"), p.inertFlowSignal);
      const f = signalById.get(p.inertFlowSignal);
      if (f && f.unit !== "Nm3/h" && f.unit !== "Am3/h") {
        ctx.problem(at("purge", "inertFlowSignal"), `signal "${p.inertFlowSignal}" is in ${f.unit}, expected Nm3/h (or Am3/h with actualConditions)`);
      }
      if (!(p.targetO2PctVol > p.inertO2PctVol)) {
        ctx.problem(at("purge", "targetO2PctVol"), `expected a target above the inert gas's O2 (${p.inertO2PctVol} %): purging only approaches it; found ${p.targetO2PctVol} %`);
      }
      // The target is on the analysers' basis; compare with the limits on that basis.
      const sameBasis = [
        o.siteMaximum && o.siteMaximum.basis === o2Basis ? o.siteMaximum.pctVol : null,
        o.loc && o.loc.basis === o2Basis ? nfpa69LimitPctVol(o.loc.pctVol, o.loc.monitoring) - (o.loc.temperatureAllowancePctPt ?? 0) : null,
      ].filter((x): x is number => x !== null);
      if (sameBasis.length && p.targetO2PctVol >= Math.min(...sameBasis)) {
        ctx.problem(at("purge", "targetO2PctVol"), `expected a target below the unit's limit of ${round(Math.min(...sameBasis))} % ${o2Basis}; found ${p.targetO2PctVol} %`);
      }
    }
  });
}

function round(x: number): string {
  return String(Number(x.toPrecision(6)));
}

export function oxygenQuantities(cfg: { units: UnitLike[] }): QuantityInfo[] {
  return cfg.units.flatMap((u) =>
    u.oxygen
      ? [
          { key: `o2.${u.id}.o2PctVol`, unit: "% vol", label: `${u.name} O2 on the limit's basis` },
          { key: `o2.${u.id}.marginPctPt`, unit: "%-pt", label: `${u.name} O2 margin to limit` },
          { key: `o2.${u.id}.trendPctPtPerMin`, unit: "%-pt/min", label: `${u.name} O2 trend` },
          { key: `o2.${u.id}.timeToLimitS`, unit: "s", label: `${u.name} time to the O2 limit at the present trend` },
          ...(u.oxygen.purge
            ? [{ key: `o2.${u.id}.purgeVolumeChanges`, unit: "volume changes", label: `${u.name} purge volume changes counted` }]
            : []),
        ]
      : [],
  );
}
