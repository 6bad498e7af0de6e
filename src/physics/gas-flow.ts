// Actual to normal gas volume (flow) by the ideal-gas law, at the normal conditions of
// DIN 1343 (and ISO 13443's "normal" state): 273.15 K and 101 325 Pa.
//   V_n = V_a · (p_a / p_n) · (T_n / T_a)
// Mill gas at a few mbar below atmosphere and 80-100 °C is far from any real-gas effect;
// the water vapour it carries stays in the volume (a wet normal flow, as the moisture balance wants).

export const NORMAL_TEMPERATURE_K = 273.15;
export const NORMAL_PRESSURE_PA = 101_325;

/** Normal m³ (or Nm³/h) from actual m³ (or Am³/h) at `temperatureC` and absolute `pressurePa`. */
export function actualToNormal(actual: number, temperatureC: number, pressurePa: number): number {
  const tK = temperatureC + 273.15;
  if (!(tK > 0)) throw new RangeError(`actual-to-normal: expected a temperature above absolute zero, found ${temperatureC} °C`);
  if (!(pressurePa > 0)) throw new RangeError(`actual-to-normal: expected an absolute pressure above 0 Pa, found ${pressurePa} Pa`);
  return actual * (pressurePa / NORMAL_PRESSURE_PA) * (NORMAL_TEMPERATURE_K / tK);
}
