// Config of the moisture sources: where the water content of the process gas comes
// from (DESIGN.md §4): an H2O analyser, a humidity sensor, or a mass balance over the
// mill. Dew point locations and acid dew points name a source by its id.
import { z } from "zod";
import { id, positive, text } from "./common.js";
import type { CheckContext, Path, QuantityInfo } from "./context.js";

/** Either a constant or a signal: exactly one of the keys may be given. */
function exactlyOne<T extends Record<string, unknown>>(keys: (keyof T & string)[], what: string) {
  return (v: T, ctx: z.RefinementCtx) => {
    const given = keys.filter((k) => v[k] !== undefined);
    if (given.length === 1) return;
    ctx.addIssue({
      code: "custom",
      message:
        `expected exactly one of ${keys.join(", ")} (${what}); ` +
        (given.length === 0 ? "found none of them" : `found ${given.join(" and ")}`),
    });
  };
}

/** Coal moisture, % by mass of the wet coal: a constant (as % or as a fraction) or a signal in pct. */
const massMoisture = z
  .strictObject({
    pctMass: z.number().min(0).lt(100).optional(),
    massFraction: z.number().min(0).lt(1).optional(),
    /** A signal in pct, read as % by mass of the wet coal. */
    signal: id.optional(),
  })
  .superRefine(exactlyOne(["pctMass", "massFraction", "signal"], "a constant in % by mass, a mass fraction, or a signal in pct"));

/** Water in the gas entering the mill, vol % wet: a constant or a signal in pctVol. */
const incomingH2o = z
  .strictObject({ pctVol: z.number().min(0).max(100).optional(), signal: id.optional() })
  .superRefine(exactlyOne(["pctVol", "signal"], "a constant in vol % or a signal in pctVol"));

/** A gas flow in Nm³/h (wet): a constant or a signal in Nm3/h. */
export const gasFlow = z
  .strictObject({ value: positive.optional(), signal: id.optional() })
  .superRefine(exactlyOne(["value", "signal"], "a constant in Nm³/h or a signal in Nm3/h"));

const massBalanceGasFlow = z
  .strictObject({
    value: positive.optional(),
    signal: id.optional(),
    /**
     * mill-inlet: the flow before the coal's water joins it (the DESIGN.md form);
     * mill-outlet: metered after the mill, evaporated water included.
     */
    measuredAt: z.enum(["mill-inlet", "mill-outlet"]).default("mill-inlet"),
  })
  .superRefine(exactlyOne(["value", "signal"], "a constant in Nm³/h or a signal in Nm3/h"));

const analyserSource = z.strictObject({
  id,
  name: text,
  kind: z.literal("analyser"),
  /** H2O analyser signal, vol % on a wet basis. */
  signal: id,
});

const humiditySource = z.strictObject({
  id,
  name: text,
  kind: z.literal("humidity"),
  /** Relative humidity over liquid water, in pct. */
  relativeHumidity: id,
  /** The sensor's own temperature. */
  temperature: id,
  /** Gauge pressure at the sensor; omitted means atmospheric (the site's barometric pressure). */
  gaugePressure: id.optional(),
});

const massBalanceSource = z.strictObject({
  id,
  name: text,
  kind: z.literal("mass-balance"),
  /** Raw coal feed signal, t/h. */
  coalFeed: id,
  rawMoisture: massMoisture,
  productMoisture: massMoisture,
  gasFlowNm3PerH: massBalanceGasFlow,
  incomingGasH2o: incomingH2o,
});

export const moistureSourceSchema = z.discriminatedUnion("kind", [analyserSource, humiditySource, massBalanceSource]);

export type MoistureSourceConfig = z.infer<typeof moistureSourceSchema>;
export type MassMoistureConfig = z.infer<typeof massMoisture>;
export type GasFlowConfig = z.infer<typeof gasFlow>;

interface SignalLike {
  id: string;
  unit: string;
}

/** Check that a signal exists and is in one of the named units (for units that share the quantity "other"). */
export function needSignalInUnit(
  ctx: CheckContext,
  units: ReadonlyMap<string, string>,
  path: Path,
  signalId: string,
  allowed: readonly string[],
  what: string,
): void {
  ctx.needSignal(path, signalId);
  const u = units.get(signalId);
  if (u !== undefined && !allowed.includes(u)) ctx.problem(path, `signal "${signalId}" is in ${u}, expected ${what}`);
}

/** Reports duplicate ids in a list; returns the ids. */
export function uniqueIds(list: { id: string }[], section: string, ctx: CheckContext): Set<string> {
  const seen = new Map<string, number>();
  list.forEach((item, i) => {
    const first = seen.get(item.id);
    if (first !== undefined) ctx.problem([section, i, "id"], `duplicate id "${item.id}" (first used at ${section}[${first}])`);
    else seen.set(item.id, i);
  });
  return new Set(seen.keys());
}

/** A constant coal moisture as written in the config. */
const shown = (m: MassMoistureConfig) => (m.pctMass !== undefined ? `${m.pctMass} %` : `mass fraction ${m.massFraction}`);

/** The mass fraction of a constant coal moisture, or null for a signal. */
export function constantMassFraction(m: MassMoistureConfig): number | null {
  if (m.pctMass !== undefined) return m.pctMass / 100;
  if (m.massFraction !== undefined) return m.massFraction;
  return null;
}

export function checkMoistureSources(cfg: { signals: SignalLike[]; moistureSources: MoistureSourceConfig[] }, ctx: CheckContext): Set<string> {
  const units = new Map(cfg.signals.map((s) => [s.id, s.unit]));
  const ids = uniqueIds(cfg.moistureSources, "moistureSources", ctx);
  cfg.moistureSources.forEach((m, i) => {
    const at = (...p: Path): Path => ["moistureSources", i, ...p];
    switch (m.kind) {
      case "analyser":
        ctx.needSignal(at("signal"), m.signal, "concentration-pct", "% vol (pctVol), wet basis");
        break;
      case "humidity":
        needSignalInUnit(ctx, units, at("relativeHumidity"), m.relativeHumidity, ["pct"], "pct (relative humidity in %)");
        ctx.needSignal(at("temperature"), m.temperature, "temperature", "a temperature unit (degC, K, degF)");
        if (m.gaugePressure) ctx.needSignal(at("gaugePressure"), m.gaugePressure, "pressure", "a pressure unit (Pa, hPa, mbar, kPa, bar)");
        break;
      case "mass-balance": {
        needSignalInUnit(ctx, units, at("coalFeed"), m.coalFeed, ["t/h"], "t/h (coal feed)");
        for (const key of ["rawMoisture", "productMoisture"] as const) {
          const s = m[key].signal;
          if (s) needSignalInUnit(ctx, units, at(key, "signal"), s, ["pct"], "pct (coal moisture in % by mass)");
        }
        const raw = constantMassFraction(m.rawMoisture);
        const product = constantMassFraction(m.productMoisture);
        if (raw !== null && product !== null && product > raw) {
          ctx.problem(at("productMoisture"), `expected the product moisture (${shown(m.productMoisture)}) at most the raw moisture (${shown(m.rawMoisture)}): a mill dries the coal`);
        }
        if (m.gasFlowNm3PerH.signal) needSignalInUnit(ctx, units, at("gasFlowNm3PerH", "signal"), m.gasFlowNm3PerH.signal, ["Nm3/h", "Am3/h"], "Nm3/h or Am3/h (gas flow, wet)");
        if (m.incomingGasH2o.signal) ctx.needSignal(at("incomingGasH2o", "signal"), m.incomingGasH2o.signal, "concentration-pct", "% vol (pctVol), wet basis");
        break;
      }
    }
  });
  return ids;
}

/** Message for a reference to a moisture source that does not exist. */
export function unknownSourceMessage(sourceId: string, ids: ReadonlySet<string>): string {
  if (ids.size === 0) {
    return `unknown moisture source "${sourceId}": no moistureSources are configured; add one (kind analyser, humidity or mass-balance) and name its id here`;
  }
  return `unknown moisture source "${sourceId}": expected one of the ids under moistureSources (${[...ids].join(", ")})`;
}

export function moistureSourceQuantities(cfg: { moistureSources: MoistureSourceConfig[] }): QuantityInfo[] {
  return cfg.moistureSources.map((m) => ({ key: `moisture.${m.id}.h2oPctVol`, unit: "% vol", label: `${m.name} H2O (wet)` }));
}
