// One value from redundant analysers measuring the same quantity (e.g. two or three O2
// analysers at the mill outlet). This is a measurement vote for an advisory indicator,
// not a safety-instrumented function: it chooses which number to show and compare, it
// trips nothing, and it reports when the analysers disagree.
//
// Readings that are not trusted (stale, bad, in function check: see analyser health) or
// have no value are left out. Modes:
//   highest  the largest trusted reading; the safe side for O2 (the highest O2 is the one
//            closest to the limit). Needs 1 trusted reading.
//   median   the median of the trusted readings (the mean of the middle two for an even
//            count, so with two it is their mean). Needs 1.
//   2oo3     two out of three must agree: of the trusted readings (at most 3 configured),
//            the two closest together; their mean is the value if they differ by no more
//            than disagreeLimit, otherwise no value. When two pairs are equally close the
//            shared middle reading (the median of the three) is taken. Needs 2.
// Disagreement: the spread (max − min) of all trusted readings exceeds disagreeLimit.
// Units: the readings' own unit; disagreeLimit in the same unit.
import { checkChoice, checkNumber } from "../physics/validate.js";

export type VoteMode = "highest" | "median" | "2oo3";
export const VOTE_MODES: readonly VoteMode[] = ["highest", "median", "2oo3"];

export interface VoteReading {
  id: string;
  value: number | null;
  trusted: boolean;
}

export interface VoteResult {
  value: number | null;
  /** Ids of the readings the value was taken from. */
  used: string[];
  disagreement: boolean;
  reason: string;
}

const NEEDED: Record<VoteMode, number> = { highest: 1, median: 1, "2oo3": 2 };

export function vote(readings: VoteReading[], mode: VoteMode, disagreeLimit: number): VoteResult {
  const fn = "vote";
  checkChoice(fn, "mode", mode, VOTE_MODES);
  checkNumber(fn, "disagreeLimit", disagreeLimit, { min: 0 });
  if (!Array.isArray(readings)) throw new RangeError(`${fn}: readings must be an array; got ${typeof readings}`);
  const ids = new Set<string>();
  for (const r of readings) {
    if (ids.has(r.id)) throw new RangeError(`${fn}: reading ids must be unique; "${r.id}" appears twice`);
    ids.add(r.id);
  }
  if (mode === "2oo3" && readings.length > 3) {
    throw new RangeError(`${fn}: 2oo3 voting takes at most 3 readings; got ${readings.length} (${[...ids].join(", ")})`);
  }

  const left: string[] = [];
  const trusted: { id: string; value: number }[] = [];
  for (const r of readings) {
    if (!r.trusted) left.push(`${r.id} not trusted`);
    else if (r.value === null || !Number.isFinite(r.value)) left.push(`${r.id} has no value`);
    else trusted.push({ id: r.id, value: r.value });
  }
  const leftOut = left.length ? `; left out: ${left.join(", ")}` : "";

  const spread = trusted.length ? Math.max(...trusted.map((r) => r.value)) - Math.min(...trusted.map((r) => r.value)) : 0;
  const disagreement = trusted.length >= 2 && spread > disagreeLimit;
  const spreadText = trusted.length >= 2 ? `; spread ${fmt(spread)} ${disagreement ? ">" : "<="} limit ${fmt(disagreeLimit)}` : "";

  const needed = NEEDED[mode];
  if (trusted.length < needed) {
    return {
      value: null,
      used: [],
      disagreement,
      reason: `${mode}: ${trusted.length} trusted of ${readings.length} readings, needs ${needed}${leftOut}`,
    };
  }

  // Stable order by value, ties by input order, so the result does not depend on chance.
  const byValue = [...trusted].sort((a, b) => a.value - b.value);

  if (mode === "highest") {
    const top = byValue[byValue.length - 1]!;
    const first = trusted.find((r) => r.value === top.value)!;
    return { value: first.value, used: [first.id], disagreement, reason: `highest of ${trusted.length} trusted: ${first.id}${spreadText}${leftOut}` };
  }

  if (mode === "median") {
    const n = byValue.length;
    const mid = n >> 1;
    const picked = n % 2 ? [byValue[mid]!] : [byValue[mid - 1]!, byValue[mid]!];
    const value = picked.length === 1 ? picked[0]!.value : picked[0]!.value / 2 + picked[1]!.value / 2;
    return {
      value,
      used: picked.map((r) => r.id),
      disagreement,
      reason: `median of ${n} trusted: ${picked.map((r) => r.id).join(" and ")}${spreadText}${leftOut}`,
    };
  }

  // 2oo3
  type R = { id: string; value: number };
  let pair: [R, R];
  let tiedMiddle: R | null = null;
  if (byValue.length === 2) {
    pair = [byValue[0]!, byValue[1]!];
  } else {
    const [a, b, c] = byValue as [R, R, R];
    const low = b.value - a.value;
    const high = c.value - b.value;
    pair = low <= high ? [a, b] : [b, c];
    if (low === high) tiedMiddle = b;
  }
  const gap = pair[1].value - pair[0].value;
  if (gap > disagreeLimit) {
    return {
      value: null,
      used: [],
      disagreement,
      reason: `2oo3: no two trusted readings agree within ${fmt(disagreeLimit)} (closest ${pair[0].id} and ${pair[1].id} differ by ${fmt(gap)})${leftOut}`,
    };
  }
  if (tiedMiddle) {
    // equally close pairs: the middle reading agrees with both others, and is the median
    return {
      value: tiedMiddle.value,
      used: byValue.map((r) => r.id),
      disagreement,
      reason: `2oo3: ${tiedMiddle.id} agrees equally with both others (differ by ${fmt(gap)}); its value is taken${spreadText}${leftOut}`,
    };
  }
  const value = pair[0].value / 2 + pair[1].value / 2;
  const third = byValue.find((r) => r !== pair[0] && r !== pair[1]);
  return {
    value,
    used: [pair[0].id, pair[1].id],
    disagreement,
    reason:
      `2oo3: ${pair[0].id} and ${pair[1].id} agree within ${fmt(disagreeLimit)} (differ by ${fmt(gap)})` +
      (third ? `; ${third.id} deviates by ${fmt(Math.abs(third.value - value))} from their mean` : "") +
      `${spreadText}${leftOut}`,
  };
}

function fmt(x: number): string {
  return Number.isInteger(x) ? String(x) : String(Number(x.toPrecision(4)));
}
