// Argument checks shared by the physics modules. Every error names the function,
// the argument, the value found and the range expected, so a bad config value or
// a bad sample can be traced from the message alone.

export interface RangeSpec {
  min?: number;
  max?: number;
  /** Exclude the lower bound itself (e.g. a pressure that must be > 0). */
  minExclusive?: boolean;
  /** Exclude the upper bound itself. */
  maxExclusive?: boolean;
  /** Unit shown in the message, e.g. "K" or "Pa". */
  unit?: string;
}

function describeRange(spec: RangeSpec): string {
  const unit = spec.unit ? ` ${spec.unit}` : "";
  const { min, max } = spec;
  if (min !== undefined && max !== undefined) {
    const lo = spec.minExclusive ? "(" : "[";
    const hi = spec.maxExclusive ? ")" : "]";
    return `in ${lo}${min}, ${max}${hi}${unit}`;
  }
  if (min !== undefined) return `${spec.minExclusive ? ">" : ">="} ${min}${unit}`;
  if (max !== undefined) return `${spec.maxExclusive ? "<" : "<="} ${max}${unit}`;
  return "finite";
}

function show(value: unknown): string {
  if (typeof value === "number") return String(value);
  if (typeof value === "string") return JSON.stringify(value);
  if (value === null) return "null";
  return typeof value;
}

/** Throws a RangeError unless `value` is a finite number inside `spec`. Returns the value. */
export function checkNumber(fn: string, name: string, value: unknown, spec: RangeSpec = {}): number {
  const expected = `${fn}: ${name} must be a finite number ${describeRange(spec)}`;
  if (typeof value !== "number" || !Number.isFinite(value)) {
    throw new RangeError(`${expected}; got ${show(value)}`);
  }
  const { min, max } = spec;
  const belowMin = min !== undefined && (spec.minExclusive ? value <= min : value < min);
  const aboveMax = max !== undefined && (spec.maxExclusive ? value >= max : value > max);
  if (belowMin || aboveMax) {
    throw new RangeError(`${expected}; got ${value}`);
  }
  return value;
}

/** Throws a RangeError unless `value` is one of `allowed`. */
export function checkChoice<T extends string>(
  fn: string,
  name: string,
  value: unknown,
  allowed: readonly T[],
): T {
  if (typeof value === "string" && (allowed as readonly string[]).includes(value)) return value as T;
  throw new RangeError(
    `${fn}: ${name} must be one of ${allowed.map((a) => JSON.stringify(a)).join(", ")}; got ${show(value)}`,
  );
}
