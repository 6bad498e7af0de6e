// Engineering units a signal may arrive in, and their conversion to the core's
// canonical units. The core only ever sees canonical values:
//   temperature °C, pressure Pa, concentration % vol or ppm (never mixed),
//   everything else as delivered (t/h, Nm³/h, kW, %, mA); Am³/h becomes Nm³/h in the core.

export type Quantity = "temperature" | "pressure" | "concentration-pct" | "concentration-ppm" | "other";

interface UnitDef {
  quantity: Quantity;
  /** Canonical unit symbol shown on screens. */
  canonical: string;
  /** value in this unit → canonical value */
  toCanonical: (v: number) => number;
}

const same = (v: number) => v;

export const UNITS: Readonly<Record<string, UnitDef>> = {
  degC: { quantity: "temperature", canonical: "°C", toCanonical: same },
  K: { quantity: "temperature", canonical: "°C", toCanonical: (v) => v - 273.15 },
  degF: { quantity: "temperature", canonical: "°C", toCanonical: (v) => ((v - 32) * 5) / 9 },
  Pa: { quantity: "pressure", canonical: "Pa", toCanonical: same },
  hPa: { quantity: "pressure", canonical: "Pa", toCanonical: (v) => v * 100 },
  mbar: { quantity: "pressure", canonical: "Pa", toCanonical: (v) => v * 100 },
  kPa: { quantity: "pressure", canonical: "Pa", toCanonical: (v) => v * 1000 },
  bar: { quantity: "pressure", canonical: "Pa", toCanonical: (v) => v * 1e5 },
  pctVol: { quantity: "concentration-pct", canonical: "% vol", toCanonical: same },
  ppm: { quantity: "concentration-ppm", canonical: "ppm", toCanonical: same },
  "t/h": { quantity: "other", canonical: "t/h", toCanonical: same },
  "Nm3/h": { quantity: "other", canonical: "Nm³/h", toCanonical: same },
  // Actual m³/h at the flow's own temperature and pressure: the core converts it to Nm³/h with
  // the signal's actualConditions (src/physics/gas-flow.ts), sample by sample.
  "Am3/h": { quantity: "other", canonical: "Nm³/h", toCanonical: same },
  kW: { quantity: "other", canonical: "kW", toCanonical: same },
  pct: { quantity: "other", canonical: "%", toCanonical: same },
  mA: { quantity: "other", canonical: "mA", toCanonical: same },
  state: { quantity: "other", canonical: "", toCanonical: same },
};

export const UNIT_NAMES = Object.keys(UNITS);

export function unitDef(name: string): UnitDef {
  const def = UNITS[name];
  if (!def) throw new Error(`unknown unit "${name}": expected one of ${UNIT_NAMES.join(", ")}`);
  return def;
}
