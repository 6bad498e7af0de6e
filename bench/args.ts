// Command-line numbers of the benchmarks, with a clear error naming the flag.

/** `--name N`: a whole number ≥ 1, or `dflt` when the flag is absent. */
export function wholeArg(name: string, dflt: number): number {
  const i = process.argv.indexOf(`--${name}`);
  if (i < 0) return dflt;
  const v = Number(process.argv[i + 1]);
  if (!Number.isSafeInteger(v) || v < 1) throw new Error(`--${name}: expected a whole number ≥ 1, found "${process.argv[i + 1] ?? ""}"`);
  return v;
}
