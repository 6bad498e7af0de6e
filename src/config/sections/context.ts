// What a config section's cross-check may ask of the loader: report a problem at a
// key, or require that a signal or unit exists (and that a signal has the right kind
// of unit). Paths are key paths into the YAML, e.g. ["dewPoints", 0, "moisture"].
import type { Quantity } from "../units.js";

export type Path = (string | number)[];

export interface CheckContext {
  problem(path: Path, message: string): void;
  /** The signal must exist; with `quantity`, its unit must measure that (e.g. "temperature"). */
  needSignal(path: Path, signalId: string, quantity?: Quantity, what?: string): void;
  needUnit(path: Path, unitId: string): void;
}

export interface QuantityInfo {
  key: string;
  unit: string;
  label: string;
}
