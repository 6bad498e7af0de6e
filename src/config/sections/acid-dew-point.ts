// Config of the sulfuric acid dew points (DESIGN.md §4): only where the drying gas is
// combustion gas. SO3 is measured, or formed from measured SO2, or from the fuel's
// sulfur, with a configured conversion; the margin is against the coldest of a list
// of temperatures (the coldest wall or gas temperature is where acid condenses first).
import { z } from "zod";
import { id, text } from "./common.js";
import type { CheckContext, Path, QuantityInfo } from "./context.js";
import { gasFlow, needSignalInUnit, uniqueIds, unknownSourceMessage } from "./moisture-source.js";

/** Share of the SO2 that is SO3, in % (1-3 % typical for combustion gas, DESIGN.md §4). */
const conversionPct = z.number().gt(0).max(100);

const so3Schema = z.discriminatedUnion("from", [
  z.strictObject({ from: z.literal("measured"), /** SO3 signal, ppm. */ signal: id }),
  z.strictObject({ from: z.literal("so2"), /** SO2 signal, ppm. */ signal: id, conversionPct }),
  z.strictObject({
    from: z.literal("fuel-sulfur"),
    /** Fuel feed signal, t/h. */
    fuelFeed: id,
    sulfurPctMass: z.number().min(0).max(100),
    /** Flue gas flow at the location, Nm³/h wet. */
    gasFlowNm3PerH: gasFlow,
    conversionPct,
  }),
]);

export const acidDewPointSchema = z.strictObject({
  id,
  name: text,
  unit: id,
  method: z.enum(["verhoff-banchero", "okkes"]),
  /** Id of a moisture source. */
  moisture: id,
  so3: so3Schema,
  /** Temperatures to compare with the acid dew point; the margin is taken against the coldest. */
  coldestTemperatures: z.array(id).min(1),
  /** Gauge pressure at the location; omitted means atmospheric. */
  gaugePressure: id.optional(),
});

export type AcidDewPointConfig = z.infer<typeof acidDewPointSchema>;
export type So3Config = AcidDewPointConfig["so3"];

interface Section {
  signals: { id: string; unit: string }[];
  acidDewPoints: AcidDewPointConfig[];
}

export function checkAcidDewPoints(cfg: Section, sourceIds: ReadonlySet<string>, ctx: CheckContext): void {
  const units = new Map(cfg.signals.map((s) => [s.id, s.unit]));
  uniqueIds(cfg.acidDewPoints, "acidDewPoints", ctx);
  cfg.acidDewPoints.forEach((a, i) => {
    const at = (...p: Path): Path => ["acidDewPoints", i, ...p];
    ctx.needUnit(at("unit"), a.unit);
    if (!sourceIds.has(a.moisture)) ctx.problem(at("moisture"), unknownSourceMessage(a.moisture, sourceIds));
    const s = a.so3;
    if (s.from === "measured") ctx.needSignal(at("so3", "signal"), s.signal, "concentration-ppm", "ppm (SO3)");
    else if (s.from === "so2") ctx.needSignal(at("so3", "signal"), s.signal, "concentration-ppm", "ppm (SO2)");
    else {
      needSignalInUnit(ctx, units, at("so3", "fuelFeed"), s.fuelFeed, ["t/h"], "t/h (fuel feed)");
      if (s.gasFlowNm3PerH.signal) needSignalInUnit(ctx, units, at("so3", "gasFlowNm3PerH", "signal"), s.gasFlowNm3PerH.signal, ["Nm3/h", "Am3/h"], "Nm3/h or Am3/h (flue gas flow, wet)");
    }
    const seen = new Set<string>();
    a.coldestTemperatures.forEach((t, k) => {
      if (seen.has(t)) ctx.problem(at("coldestTemperatures", k), `signal "${t}" is listed twice: expected each temperature once`);
      seen.add(t);
      ctx.needSignal(at("coldestTemperatures", k), t, "temperature", "a temperature unit (degC, K, degF)");
    });
    if (a.gaugePressure) ctx.needSignal(at("gaugePressure"), a.gaugePressure, "pressure", "a pressure unit (Pa, hPa, mbar, kPa, bar)");
  });
}

export function acidDewPointQuantities(cfg: { acidDewPoints: AcidDewPointConfig[] }): QuantityInfo[] {
  return cfg.acidDewPoints.flatMap((a) => [
    { key: `aciddewpoint.${a.id}.so3Ppm`, unit: "ppm", label: `${a.name} SO3` },
    { key: `aciddewpoint.${a.id}.acidDewPointC`, unit: "°C", label: `${a.name} acid dew point` },
    { key: `aciddewpoint.${a.id}.marginK`, unit: "K", label: `${a.name} acid dew point margin (coldest temperature)` },
  ]);
}
