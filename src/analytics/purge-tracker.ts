// Purge progress of one unit being inerted: volume changes counted from the inert-gas flow,
// the O2 a well-mixed vessel would have reached (src/physics/purge.ts), the measured O2, and
// a time-to-target fitted to the measured decay. Real vessels mix imperfectly (dead zones,
// short-circuit flow), so the count and the prediction are context for the measurement:
// this tracker never declares the unit inert; the inerting state does that on measured O2.
//
// Counting: N = ∫ Q dt / V with Q the inert flow in Nm³/h and V the unit volume in m³,
// taking 1 Nm³ as 1 m³. The gas in the vessel is at its own temperature and pressure, where
// 1 Nm³ (0 °C, 1.01325 bar) fills T/273.15 · 1.01325 bar/p m³: about 1.3 m³ at 80 °C. For a
// unit at or above 0 °C and at or below atmospheric pressure (mills, filters and silos run a
// few mbar below), the count is therefore low and the prediction on the slow side: conservative.
// It is not conservative for a unit below 0 °C or pressurised above atmosphere.
// Each interval between updates counts the smaller of the flows at its two ends (never more
// than was seen), and nothing when either end is unknown or the interval is longer than
// maxGapS: flow that was not seen is not counted.
//
// Fit: least squares of y = ln(C − C0) against t over the recent measured points (C the
// measured O2, C0 the inert gas's O2), decimated to fitPoints over fitWindowS. A well-mixed
// decay is a straight line there with slope −Q/V. The time to target uses the fitted rate from
// the latest measured level: it never shows the target reached while the measurement is above it.
//
// Units: epoch ms for times, % vol for O2, m³ and Nm³/h. Memory: at most fitPoints + 1 points.
import { predictedConcentrationWellMixed, volumeChangesToTarget } from "../physics/purge.js";
import { checkNumber } from "../physics/validate.js";
import { checkFinite } from "./check.js";

export interface PurgeTrackerConfig {
  /** Free gas volume of the unit, m³ (> 0). */
  volumeM3: number;
  /** O2 in the inert gas, % vol (e.g. 0.01 for nitrogen from a generator; 0 for pure N2). */
  inertO2PctVol: number;
  /** O2 the purge aims for, % vol (> inertO2PctVol). */
  targetO2PctVol: number;
  /** Intervals between updates longer than this are not counted, s (default 120). */
  maxGapS?: number;
  /** The fit looks back this far, s (default 600). */
  fitWindowS?: number;
  /** At most this many points in the fit (default 60, one per fitWindowS / fitPoints). */
  fitPoints?: number;
  /** Fewest points for a fit (default 5). */
  minFitPoints?: number;
  /** The fitted line must fall by at least this much in ln(C − C0) over its span (default ln 1.2: C − C0 down by a sixth). */
  minDecayLn?: number;
}

export interface PurgeView {
  active: boolean;
  /** Volume changes counted since start (Nm³ taken as m³, see above). */
  volumeChanges: number;
  /** Well-mixed O2 after the counted volume changes, % vol. */
  predictedO2PctVol: number | null;
  /** Latest measured O2, % vol; null when the latest update had none. */
  measuredO2PctVol: number | null;
  /** Seconds from the latest measurement to the target at the fitted decay rate; 0 once measured at or below target. */
  fittedTimeToTargetS: number | null;
  reason: string;
}

export class PurgeTracker {
  private readonly cfg: Required<PurgeTrackerConfig>;
  private active = false;
  private everStarted = false;
  private startMs = 0;
  private startO2 = 0;
  private lastMs: number | null = null;
  private lastFlow: number | null = null;
  private volumeChanges = 0;
  private uncountedS = 0;
  private measured: number | null = null;
  /** Fit points: t in s since start, y = ln(C − C0). */
  private fitT: number[] = [];
  private fitY: number[] = [];

  constructor(cfg: PurgeTrackerConfig) {
    const fn = "PurgeTracker";
    checkNumber(fn, "volumeM3", cfg.volumeM3, { min: 0, minExclusive: true, unit: "m³" });
    checkNumber(fn, "inertO2PctVol", cfg.inertO2PctVol, { min: 0, max: 100, unit: "% vol" });
    checkNumber(fn, "targetO2PctVol", cfg.targetO2PctVol, { min: 0, max: 100, unit: "% vol" });
    if (!(cfg.targetO2PctVol > cfg.inertO2PctVol)) {
      throw new RangeError(
        `${fn}: targetO2PctVol ${cfg.targetO2PctVol} must be above inertO2PctVol ${cfg.inertO2PctVol}: ` +
          `purging only approaches the inert gas's O2`,
      );
    }
    const full: Required<PurgeTrackerConfig> = {
      maxGapS: 120,
      fitWindowS: 600,
      fitPoints: 60,
      minFitPoints: 5,
      minDecayLn: Math.log(1.2),
      ...cfg,
    };
    checkNumber(fn, "maxGapS", full.maxGapS, { min: 0, minExclusive: true, unit: "s" });
    checkNumber(fn, "fitWindowS", full.fitWindowS, { min: 0, minExclusive: true, unit: "s" });
    if (!Number.isInteger(full.fitPoints) || full.fitPoints < 2) {
      throw new RangeError(`${fn}: fitPoints must be an integer >= 2; got ${String(full.fitPoints)}`);
    }
    if (!Number.isInteger(full.minFitPoints) || full.minFitPoints < 2 || full.minFitPoints > full.fitPoints) {
      throw new RangeError(`${fn}: minFitPoints must be an integer in [2, fitPoints ${full.fitPoints}]; got ${String(full.minFitPoints)}`);
    }
    checkNumber(fn, "minDecayLn", full.minDecayLn, { min: 0, minExclusive: true });
    this.cfg = full;
  }

  /** Begin a purge at nowMs from the O2 the unit holds then (% vol); forgets any earlier purge. */
  start(nowMs: number, o2PctVol: number): void {
    checkFinite("PurgeTracker.start", "nowMs", nowMs, "epoch ms");
    checkNumber("PurgeTracker.start", "o2PctVol", o2PctVol, { min: 0, max: 100, unit: "% vol" });
    this.active = true;
    this.everStarted = true;
    this.startMs = nowMs;
    this.startO2 = o2PctVol;
    this.lastMs = nowMs;
    this.lastFlow = null; // call update() at the start time too, or the first interval is not counted
    this.volumeChanges = 0;
    this.uncountedS = 0;
    this.measured = o2PctVol;
    this.fitT = [];
    this.fitY = [];
  }

  /** Volume changes counted since the purge started (view().volumeChanges once a purge has started). */
  get volumeChangesCounted(): number {
    return this.volumeChanges;
  }

  /** End the purge; view() keeps the last figures with active false. */
  stop(): void {
    this.active = false;
  }

  /**
   * Take the inert flow (Nm³/h; null when untrusted; small negative meter readings count as 0)
   * and the measured O2 (% vol; null when untrusted) at nowMs (non-decreasing). Ignored when
   * no purge is active.
   */
  update(nowMs: number, inertFlowNm3PerH: number | null, measuredO2PctVol: number | null): void {
    if (!this.active) return;
    const fn = "PurgeTracker.update";
    checkFinite(fn, "nowMs", nowMs, "epoch ms");
    if (inertFlowNm3PerH !== null) checkFinite(fn, "inertFlowNm3PerH", inertFlowNm3PerH, "Nm³/h");
    if (measuredO2PctVol !== null) checkFinite(fn, "measuredO2PctVol", measuredO2PctVol, "% vol");
    if (this.lastMs !== null && nowMs < this.lastMs) {
      throw new RangeError(`${fn}: nowMs must not decrease; got ${nowMs} after ${this.lastMs}`);
    }
    const flow = inertFlowNm3PerH === null ? null : Math.max(0, inertFlowNm3PerH);
    const dtS = (nowMs - this.lastMs!) / 1000;
    if (dtS > 0) {
      if (flow !== null && this.lastFlow !== null && dtS <= this.cfg.maxGapS) {
        this.volumeChanges += (Math.min(flow, this.lastFlow) * (dtS / 3600)) / this.cfg.volumeM3;
      } else {
        this.uncountedS += dtS;
      }
    }
    this.lastMs = nowMs;
    this.lastFlow = flow;
    this.measured = measuredO2PctVol;
    if (measuredO2PctVol !== null) this.addFitPoint((nowMs - this.startMs) / 1000, measuredO2PctVol);
  }

  private addFitPoint(tS: number, o2: number): void {
    const excess = o2 - this.cfg.inertO2PctVol;
    if (!(excess > 0)) return; // at or below the inert gas's O2: analyser noise, no logarithm
    const stepS = this.cfg.fitWindowS / this.cfg.fitPoints;
    const n = this.fitT.length;
    if (n > 0 && tS - this.fitT[n - 1]! < stepS) return;
    this.fitT.push(tS);
    this.fitY.push(Math.log(excess));
    while (this.fitT.length > 0 && this.fitT[0]! < tS - this.cfg.fitWindowS) {
      this.fitT.shift();
      this.fitY.shift();
    }
  }

  /** Least-squares line through the fit points, or null with too few or no time spread. */
  private fit(): { slopePerS: number; spanS: number; n: number } | null {
    const n = this.fitT.length;
    if (n < this.cfg.minFitPoints) return null;
    const t0 = this.fitT[0]!;
    let st = 0;
    let sy = 0;
    for (let i = 0; i < n; i++) {
      st += this.fitT[i]! - t0;
      sy += this.fitY[i]!;
    }
    const mt = st / n;
    const my = sy / n;
    let sxx = 0;
    let sxy = 0;
    for (let i = 0; i < n; i++) {
      const dx = this.fitT[i]! - t0 - mt;
      sxx += dx * dx;
      sxy += dx * (this.fitY[i]! - my);
    }
    if (!(sxx > 0)) return null;
    return { slopePerS: sxy / sxx, spanS: this.fitT[n - 1]! - t0, n };
  }

  view(): PurgeView {
    if (!this.everStarted) {
      return { active: false, volumeChanges: 0, predictedO2PctVol: null, measuredO2PctVol: null, fittedTimeToTargetS: null, reason: "no purge started" };
    }
    const c = this.cfg;
    const predicted = predictedConcentrationWellMixed(this.startO2, c.inertO2PctVol, this.volumeChanges);
    // target > inert O2 (checked), so from at or below the target nothing more is needed
    const needed = this.startO2 <= c.targetO2PctVol ? 0 : volumeChangesToTarget(this.startO2, c.inertO2PctVol, c.targetO2PctVol);
    const parts: string[] = [];
    const elapsedS = ((this.lastMs ?? this.startMs) - this.startMs) / 1000;
    parts.push(
      `${this.active ? "purge running" : "purge stopped"} for ${Math.round(elapsedS)} s from ${fmt(this.startO2)} % O2: ` +
        `${fmt(this.volumeChanges)} volume changes counted of ${fmt(needed)} a well-mixed unit needs for ${fmt(c.targetO2PctVol)} % ` +
        `(Nm³ counted as m³: low for a warm unit, so the prediction is on the slow side)`,
    );
    if (this.uncountedS > 0) parts.push(`${Math.round(this.uncountedS)} s not counted (flow unknown or a gap)`);
    parts.push(`well-mixed prediction ${fmt(predicted)} %`);

    let fitted: number | null = null;
    const m = this.measured;
    if (m === null) {
      parts.push("no trusted O2 measurement now: no fitted time");
    } else if (m <= c.targetO2PctVol) {
      fitted = 0;
      parts.push(`measured ${fmt(m)} % is at or below the target ${fmt(c.targetO2PctVol)} %`);
    } else {
      const f = this.fit();
      if (f === null) {
        parts.push(`measured ${fmt(m)} %; fit waiting for ${c.minFitPoints} points`);
      } else if (!(f.slopePerS < 0) || -f.slopePerS * f.spanS < c.minDecayLn) {
        parts.push(`measured ${fmt(m)} %; not enough decay seen yet over ${Math.round(f.spanS)} s for a fitted time`);
      } else {
        fitted = (Math.log(c.targetO2PctVol - c.inertO2PctVol) - Math.log(m - c.inertO2PctVol)) / f.slopePerS;
        parts.push(
          `measured ${fmt(m)} %; fitted decay time constant ${fmt(-1 / f.slopePerS)} s over ${f.n} points gives ${Math.round(fitted)} s to ${fmt(c.targetO2PctVol)} %`,
        );
      }
    }
    parts.push("the measured O2, not the count, decides whether the unit is inert");
    return {
      active: this.active,
      volumeChanges: this.volumeChanges,
      predictedO2PctVol: predicted,
      measuredO2PctVol: m,
      fittedTimeToTargetS: fitted,
      reason: parts.join("; "),
    };
  }
}

function fmt(x: number): string {
  return Number.isInteger(x) ? String(x) : String(Number(x.toPrecision(4)));
}
