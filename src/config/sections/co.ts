// Config of the CO measuring points (rate of rise, baseline, enclosed-store indicators)
// and of the CO rise across a unit (outlet minus inlet).
import { z } from "zod";
import type { MillPhase } from "../../analytics/phase.js";
import { id, positive, text } from "./common.js";
import type { CheckContext, QuantityInfo } from "./context.js";

// Every phase name, checked against the MillPhase type so the two cannot drift apart.
const PHASES = {
  "standstill-empty": 0,
  "standstill-loaded": 0,
  "warm-up": 0,
  inerting: 0,
  starting: 0,
  grinding: 0,
  stopping: 0,
  maintenance: 0,
  unknown: 0,
} satisfies Record<MillPhase, 0>;
const PHASE_NAMES = Object.keys(PHASES) as [MillPhase, ...MillPhase[]];

/** Start-up phases in which the CO level moves for reasons other than a heating (DESIGN.md §4). */
export const DEFAULT_FREEZE_PHASES: MillPhase[] = ["warm-up", "inerting", "starting"];

const baselineSchema = z.strictObject({
  /** The baseline is the median over this much source time. */
  windowS: positive.default(3600),
  /** One value kept per slot of this many seconds: at most windowS / decimateS + 1 values held. */
  decimateS: positive.default(60),
  /** The baseline counts once it holds values covering this much time. */
  minS: positive.default(900),
  /** Unit whose operating phase freezes the baseline (e.g. the mill for its filter); default the point's own unit. */
  phaseUnit: id.optional(),
  /** Phases during which the baseline is frozen. */
  freezePhases: z.array(z.enum(PHASE_NAMES)).default(DEFAULT_FREEZE_PHASES),
  /** A state signal naming the drying-gas source (unit: state); a change of its value freezes the baseline. */
  gasSourceSignal: id.optional(),
  /** How long a gas source change keeps the baseline frozen. */
  gasSourceFreezeS: positive.default(1800),
});

const storeSchema = z.strictObject({
  /** O2 of the store atmosphere, % vol. */
  o2Signal: id,
  /** N2 of the store atmosphere, % vol (N2 with argon, as the 0.265 factor of Graham's ratio counts it). */
  n2Signal: id.optional(),
  /**
   * Without an N2 signal: N2 = 100 − O2 − CO (% vol). This assumes the rest of the gas is N2
   * (with argon). Wrong for a store inerted with CO2 or flue gas, where the rest is partly CO2;
   * and in any N2-inerted store Graham's ratio is understated (see src/physics/graham.ts).
   */
  n2ByDifference: z.boolean().default(false),
  /**
   * Below this oxygen deficiency (0.265·N2 − O2, %-pt) the ratio divides by analyser noise and
   * is reported unknown. 0.3 %-pt: from memory (mine-fire practice), a site setting.
   */
  minDeficiencyPctPt: positive.default(0.3),
});

export const coPointSchema = z
  .strictObject({
    id,
    name: text,
    unit: id,
    signal: id,
    /** Short rolling window (mill/filter 1–5 min, common practice); the rules' default gradient. */
    shortWindowS: positive,
    /** Long rolling window (mill/filter 10–15 min, silo hours, common practice). */
    longWindowS: positive,
    /** Analyser transport lag; both windows must be longer. Samples this long after a function check are still check gas. */
    transportLagS: z.number().nonnegative(),
    /** A window gives a gradient once it holds this many points over at least half its length. */
    minPoints: z.number().int().min(3).default(10),
    /** A gap longer than this restarts the windows: no gradient across a gap. */
    maxGapS: positive.default(30),
    /** At most this many points per window (the window is decimated to windowS / maxPointsPerWindow slots). */
    maxPointsPerWindow: z.number().int().min(60).default(1200),
    baseline: baselineSchema.prefault({}),
    /** Enclosed store (unit kind silo or dust-hopper): long-window rise in ppm/h and Graham's ratio. */
    store: storeSchema.optional(),
  })
  // `windowS` mirrors the short window for readers written for the single window of earlier configs.
  .transform((c) => ({ ...c, windowS: c.shortWindowS }));

export const coRiseSchema = z.strictObject({
  id,
  name: text,
  unit: id,
  /** CO point id upstream of the unit. */
  inlet: id,
  /** CO point id downstream of the unit. */
  outlet: id,
  /** Gas travel time from inlet to outlet: the inlet value is taken this much earlier. */
  transportDelayS: z.number().nonnegative(),
  /** Without samples on both sides to interpolate between, the nearest inlet sample within this is used. */
  toleranceS: positive.default(5),
});

export const coSection = {
  coPoints: z.array(coPointSchema).default([]),
  coRises: z.array(coRiseSchema).default([]),
};

export type CoPointConfig = z.infer<typeof coPointSchema>;
export type CoBaselineConfig = CoPointConfig["baseline"];
export type CoStoreConfig = NonNullable<CoPointConfig["store"]>;
export type CoRiseConfig = z.infer<typeof coRiseSchema>;

interface UnitLike {
  id: string;
  kind: string;
}
interface SignalLike {
  id: string;
  unit: string;
}
type Section = { coPoints: CoPointConfig[]; coRises: CoRiseConfig[]; units: UnitLike[]; signals: SignalLike[] };

const STORE_KINDS = ["silo", "dust-hopper"];

export function checkCo(cfg: Section, ctx: CheckContext): void {
  const unitById = new Map(cfg.units.map((u) => [u.id, u]));
  const signalById = new Map(cfg.signals.map((s) => [s.id, s]));
  cfg.coPoints.forEach((c, i) => {
    const at = (...p: (string | number)[]) => ["coPoints", i, ...p];
    ctx.needUnit(at("unit"), c.unit);
    ctx.needSignal(at("signal"), c.signal, "concentration-ppm", "ppm");
    for (const key of ["shortWindowS", "longWindowS"] as const) {
      if (c[key] <= c.transportLagS) {
        ctx.problem(at(key), `expected a window longer than the transport lag (${c.transportLagS} s); found ${c[key]} s`);
      }
    }
    if (c.longWindowS <= c.shortWindowS) {
      ctx.problem(at("longWindowS"), `expected the long window longer than the short one (${c.shortWindowS} s); found ${c.longWindowS} s`);
    }
    // A window counts from half full; decimated, half a window holds about maxPointsPerWindow / 2 points.
    if (c.minPoints > c.maxPointsPerWindow / 2) {
      ctx.problem(at("minPoints"), `expected at most half of maxPointsPerWindow (${c.maxPointsPerWindow / 2}); found ${c.minPoints}`);
    }
    const b = c.baseline;
    if (b.decimateS >= b.windowS) ctx.problem(at("baseline", "decimateS"), `expected less than the baseline window (${b.windowS} s); found ${b.decimateS} s`);
    if (b.minS > b.windowS) ctx.problem(at("baseline", "minS"), `expected at most the baseline window (${b.windowS} s); found ${b.minS} s`);
    if (b.phaseUnit) ctx.needUnit(at("baseline", "phaseUnit"), b.phaseUnit);
    if (b.gasSourceSignal) {
      ctx.needSignal(at("baseline", "gasSourceSignal"), b.gasSourceSignal);
      const s = signalById.get(b.gasSourceSignal);
      if (s && s.unit !== "state") {
        ctx.problem(at("baseline", "gasSourceSignal"), `expected a state signal (unit: state) naming the gas source; "${s.id}" is in ${s.unit}`);
      }
    }
    const st = c.store;
    if (st) {
      const u = unitById.get(c.unit);
      if (u && !STORE_KINDS.includes(u.kind)) {
        ctx.problem(at("store"), `expected the point's unit to be an enclosed store (kind ${STORE_KINDS.join(" or ")}); unit "${u.id}" is a ${u.kind}`);
      }
      ctx.needSignal(at("store", "o2Signal"), st.o2Signal, "concentration-pct", "% vol (pctVol)");
      if (st.n2Signal) ctx.needSignal(at("store", "n2Signal"), st.n2Signal, "concentration-pct", "% vol (pctVol)");
      if (st.n2Signal && st.n2ByDifference) {
        ctx.problem(at("store", "n2ByDifference"), "expected either n2Signal or n2ByDifference: true, not both");
      }
    }
  });

  const points = new Set(cfg.coPoints.map((c) => c.id));
  const seen = new Map<string, number>();
  cfg.coRises.forEach((r, i) => {
    const at = (...p: (string | number)[]) => ["coRises", i, ...p];
    const first = seen.get(r.id);
    if (first !== undefined) ctx.problem(at("id"), `duplicate id "${r.id}" (first used at coRises[${first}])`);
    else seen.set(r.id, i);
    ctx.needUnit(at("unit"), r.unit);
    for (const side of ["inlet", "outlet"] as const) {
      if (!points.has(r[side])) ctx.problem(at(side), `unknown CO point "${r[side]}": expected one of the ids under coPoints (${[...points].join(", ")})`);
    }
    if (r.inlet === r.outlet) ctx.problem(at("outlet"), `expected an outlet other than the inlet; found "${r.outlet}" for both`);
  });
}

export function coQuantities(cfg: Pick<Section, "coPoints" | "coRises">): QuantityInfo[] {
  const out: QuantityInfo[] = [];
  for (const c of cfg.coPoints) {
    const k = `co.${c.id}`;
    out.push(
      { key: `${k}.gradientPpmPerMin`, unit: "ppm/min", label: `${c.name} CO gradient (robust, ${c.shortWindowS} s)` },
      { key: `${k}.gradientLsPpmPerMin`, unit: "ppm/min", label: `${c.name} CO gradient (least squares, ${c.shortWindowS} s)` },
      { key: `${k}.gradientLongPpmPerMin`, unit: "ppm/min", label: `${c.name} CO gradient (robust, ${c.longWindowS} s)` },
      { key: `${k}.baselinePpm`, unit: "ppm", label: `${c.name} CO baseline` },
      { key: `${k}.riseAboveBaselinePpm`, unit: "ppm", label: `${c.name} CO rise above baseline` },
    );
    if (c.store) {
      out.push({ key: `${k}.riseLongPpmPerH`, unit: "ppm/h", label: `${c.name} CO rise (robust, ${c.longWindowS} s)` });
      if (c.store.n2Signal || c.store.n2ByDifference) out.push({ key: `${k}.grahamRatio`, unit: "%", label: `${c.name} Graham's ratio` });
    }
  }
  for (const r of cfg.coRises) out.push({ key: `co-rise.${r.id}.risePpm`, unit: "ppm", label: `${r.name} CO rise (outlet − inlet)` });
  return out;
}
