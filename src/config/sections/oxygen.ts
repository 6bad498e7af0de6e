// Config of each unit's oxygen limit and the analysers behind it.
import { z } from "zod";
import { id, positive } from "./common.js";
import type { CheckContext, QuantityInfo } from "./context.js";

const limitOrigin = z.string().min(3);

export const oxygenSchema = z.strictObject({
  signal: id,
  /** H2O signal (vol % wet) used to convert between wet and dry basis when the O2 and limit bases differ. */
  h2oSignal: id.optional(),
  siteMaximum: z
    .strictObject({ pctVol: z.number().gt(0).lt(21), basis: z.enum(["wet", "dry"]), origin: limitOrigin })
    .optional(),
  loc: z
    .strictObject({
      pctVol: z.number().gt(0).lt(21),
      basis: z.enum(["wet", "dry"]).default("dry"),
      monitoring: z.enum(["continuous", "periodic"]),
      origin: limitOrigin,
    })
    .optional(),
  marginalBandPctPt: positive.default(1.5),
});

export type OxygenConfig = z.infer<typeof oxygenSchema>;
interface UnitLike {
  id: string;
  name: string;
  oxygen?: OxygenConfig | undefined;
}
interface SignalLike {
  id: string;
  basis?: "wet" | "dry" | undefined;
}

export function checkOxygen(cfg: { units: UnitLike[]; signals: SignalLike[] }, ctx: CheckContext): void {
  const signalById = new Map(cfg.signals.map((s) => [s.id, s]));
  cfg.units.forEach((u, i) => {
    const o = u.oxygen;
    if (!o) return;
    ctx.needSignal(["units", i, "oxygen", "signal"], o.signal, "concentration-pct", "% vol (pctVol)");
    const o2 = signalById.get(o.signal);
    if (o2 && !o2.basis) ctx.problem(["units", i, "oxygen", "signal"], `O2 signal "${o.signal}" must declare its basis (wet or dry) under signals`);
    if (!o.siteMaximum && !o.loc) ctx.problem(["units", i, "oxygen"], "expected a siteMaximum, a loc, or both: a unit's O2 needs a limit");
    if (o.h2oSignal) ctx.needSignal(["units", i, "oxygen", "h2oSignal"], o.h2oSignal, "concentration-pct", "% vol (pctVol)");
    const bases = [o.siteMaximum?.basis, o.loc?.basis].filter(Boolean);
    if (o2?.basis && bases.some((b) => b !== o2.basis) && !o.h2oSignal) {
      ctx.problem(["units", i, "oxygen"], `the O2 signal reads ${o2.basis} but a limit is on another basis: expected h2oSignal for the wet/dry conversion`);
    }
  });
}

export function oxygenQuantities(cfg: { units: UnitLike[] }): QuantityInfo[] {
  return cfg.units.flatMap((u) =>
    u.oxygen
      ? [
          { key: `o2.${u.id}.o2PctVol`, unit: "% vol", label: `${u.name} O2 on the limit's basis` },
          { key: `o2.${u.id}.marginPctPt`, unit: "%-pt", label: `${u.name} O2 margin to limit` },
        ]
      : [],
  );
}
