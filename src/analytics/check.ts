// Argument check for values that only need to be finite (times, readings). The shared
// checkNumber (src/physics/validate.ts) is for ranges; this one says "a finite number" plainly.

/** Throws a RangeError naming the function, the argument, its unit and what was found. */
export function checkFinite(fn: string, name: string, value: unknown, unit?: string): number {
  if (typeof value === "number" && Number.isFinite(value)) return value;
  const found = typeof value === "number" ? String(value) : value === null ? "null" : typeof value;
  throw new RangeError(`${fn}: ${name} must be a finite number${unit ? ` (${unit})` : ""}; got ${found}`);
}
