// Graham's ratio for enclosed coal stores (fine-coal silo, hopper): the CO produced per unit
// of oxygen consumed, in per cent,
//   GR = 100 · CO / (0.265 · N2 − O2)        (all in % vol)
// 0.265 is the O2/N2 ratio of fresh air (20.93/79.04, N2 counted with argon, from memory), so
// 0.265 · N2 is the O2 the gas held before anything consumed it, and the denominator is the
// oxygen deficiency. Unlike CO alone it does not fall when the store is ventilated or diluted
// with air, because the deficiency is diluted alike.
//
// Caveat: nitrogen added for inerting raises 0.265 · N2 without any O2 being consumed, so the
// deficiency is overstated and GR understated in an N2-inerted store: there it is no
// indicator of heating. (Mine-fire practice for sealed areas; DESIGN.md §4.)
import { checkNumber } from "./validate.js";

/** 100 · CO / (0.265 · N2 − O2), all in % vol (CO in ppm / 10 000). */
export function grahamRatio(coPctVol: number, n2PctVol: number, o2PctVol: number): number {
  const fn = "grahamRatio";
  checkNumber(fn, "coPctVol", coPctVol, { min: 0, max: 100, unit: "% vol" });
  checkNumber(fn, "n2PctVol", n2PctVol, { min: 0, max: 100, unit: "% vol" });
  checkNumber(fn, "o2PctVol", o2PctVol, { min: 0, max: 100, unit: "% vol" });
  const deficiencyPctPt = 0.265 * n2PctVol - o2PctVol;
  if (!(deficiencyPctPt > 0)) {
    throw new RangeError(
      `${fn}: the oxygen deficiency 0.265 · N2 − O2 must be > 0 %-pt; got ${deficiencyPctPt} ` +
        `(N2 ${n2PctVol} %, O2 ${o2PctVol} %): no oxygen consumed, so the ratio is meaningless`,
    );
  }
  return (100 * coPctVol) / deficiencyPctPt;
}

export type GrahamBand = "normal" | "heating" | "advanced-heating" | "serious-heating" | "active-fire";

export interface GrahamInterpretation {
  band: GrahamBand;
  text: string;
  source: string;
}

/**
 * Mine-fire practice bands (DESIGN.md §4): < 0.5 normal, 0.5–1 heating, 1–2 advanced
 * heating, 2–3 serious heating (from memory), > 3 active fire. Each band includes its lower
 * bound; 3 itself is still "serious heating". Indicative only: the site sets its own levels.
 */
export function grahamInterpretation(gr: number): GrahamInterpretation {
  checkNumber("grahamInterpretation", "gr", gr, { min: 0 });
  const practice = "mine-fire practice (DESIGN.md §4)";
  if (gr < 0.5) return { band: "normal", text: "normal (below 0.5)", source: practice };
  if (gr < 1) return { band: "heating", text: "heating (0.5 to 1)", source: practice };
  if (gr < 2) return { band: "advanced-heating", text: "advanced heating (1 to 2)", source: practice };
  if (gr <= 3) return { band: "serious-heating", text: "serious heating (2 to 3)", source: `${practice}, band from memory` };
  return { band: "active-fire", text: "active fire (above 3)", source: practice };
}
