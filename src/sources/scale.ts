// From a raw value as delivered to the core's canonical unit: scale and offset first (in the
// signal's own unit), then the unit conversion. The same arithmetic as the MQTT decoder
// (decode.ts), so a signal gives the same sample whichever source carries it.
import type { SignalConfig } from "../config/schema.js";
import { unitDef } from "../config/units.js";

export function makeScaler(signal: Pick<SignalConfig, "unit" | "scale" | "offset">): (raw: number) => number {
  const toCanonical = unitDef(signal.unit).toCanonical;
  const { scale, offset } = signal;
  return (raw) => toCanonical(raw * scale + offset);
}
