// Operating phase of one mill, inferred from the drive, the feed, the gas temperatures,
// the inert-gas flow and a trip signal where one exists. Advisories and their thresholds
// depend on the phase, and the phases are where the hazards sit (DESIGN.md §1): warm-up,
// first feed, planned stop, trip with coal left inside, restart, long standstill.
//
// Names are our own, in trade words:
//   maintenance        declared by the maintenance input (wins over everything; clears coal-inside)
//   standstill-loaded  drive stopped with coal inside (after a trip, or a stop with feed on, or a
//                      stop before the mill ran empty); persists until the mill runs empty or
//                      maintenance is declared, whatever hot or inert gas does meanwhile
//   standstill-empty   drive stopped, mill empty, no warm-up and no inerting
//   warm-up            drive stopped, mill empty, hot gas arriving: the inlet temperature rose
//                      above warmGasC (a rising crossing; a hot inlet after a stop is cooling, not warm-up)
//   inerting           drive stopped, mill empty, inert-gas flow on (wins over warm-up)
//   starting           drive running, no feed yet in this run (feed off or still ramping below feedOn)
//   grinding           drive running and feed on
//   stopping           drive running, feed off after it was on in this run (the mill runs empty)
//   unknown            an input the decision needs is null (untrusted): never a guess
//
// Rules, in order: maintenance; trip (→ standstill, loaded if coal is inside); drive unknown →
// unknown; drive running → grinding / stopping / starting (feed unknown → unknown); drive
// stopped → loaded if coal inside, else inerting, warm-up, standstill-empty (their inputs
// unknown → unknown).
// Coal inside is a remembered fact: set whenever feed is on, cleared only by running the drive
// without feed for runEmptyS ("run empty") or by maintenance. Without history (tracker just
// started) it is assumed (initialCoalInside, default true: the cautious side).
//
// Flicker: each threshold test (drive running, feed on, hot gas, inert flow) is debounced: a
// change counts only after the raw test held its new value for minDwellS. The first value seen
// is taken at once. Trip, maintenance and unknown act at once: they are explicit or untrusted.
//
// Units: nowMs epoch ms (non-decreasing), kW, t/h, °C, Nm³/h as named.
import { checkNumber } from "../physics/validate.js";
import { checkFinite } from "./check.js";

export type MillPhase =
  | "standstill-empty"
  | "standstill-loaded"
  | "warm-up"
  | "inerting"
  | "starting"
  | "grinding"
  | "stopping"
  | "maintenance"
  | "unknown";

export interface PhaseConfig {
  /** Drive power at or above which the mill counts as running, kW (> 0). */
  drivePowerRunningKW: number;
  /** Coal feed at or above which feed counts as on, t/h (> 0). */
  feedOnTPerH: number;
  /** Mill inlet gas temperature at or above which hot gas is arriving, °C. */
  warmGasC: number;
  /** Inert-gas flow at or above which inerting is on, Nm³/h (> 0); without it there is no inerting phase. */
  inertFlowOnNm3PerH?: number;
  /** Minimum time a threshold test must hold a new value before it counts, s (>= 0). */
  minDwellS: number;
  /**
   * Running the drive without feed for this long empties the mill, s (> 0). Default 300 s:
   * a placeholder, not a sourced value; set it per site from the mill's grind-out time.
   */
  runEmptyS?: number;
  /** Coal inside when the tracker starts without history (default true, the cautious side). */
  initialCoalInside?: boolean;
}

export interface PhaseInputs {
  nowMs: number;
  drivePowerKW: number | null;
  feedTPerH: number | null;
  millOutletTempC: number | null;
  millInletTempC: number | null;
  inertFlowNm3PerH: number | null;
  trip?: boolean | null;
  maintenance?: boolean | null;
}

export interface PhaseResult {
  phase: MillPhase;
  /** When the current phase was entered (epoch ms of the update that entered it). */
  sinceMs: number;
  reason: string;
  /** The raw inputs and the debounced tests and memory behind the decision. */
  inputs: Record<string, number | boolean | null>;
}

export const DEFAULT_RUN_EMPTY_S = 300;

/** A boolean test that changes only after the raw test held the new value for the dwell time. */
class Debounced {
  value: boolean | null = null;
  private pending: boolean | null = null;
  private pendingSinceMs = 0;

  /** null (untrusted) input holds the value and any pending change. */
  update(raw: boolean | null, nowMs: number, dwellMs: number): boolean | null {
    if (raw === null) return this.value;
    if (this.value === null || raw === this.value) {
      this.value = raw;
      this.pending = null;
      return raw;
    }
    if (this.pending !== raw) {
      this.pending = raw;
      this.pendingSinceMs = nowMs;
    }
    if (nowMs - this.pendingSinceMs >= dwellMs) {
      this.value = raw;
      this.pending = null;
    }
    return this.value;
  }

  force(v: boolean): void {
    this.value = v;
    this.pending = null;
  }
}

export class PhaseTracker {
  private readonly cfg: Required<Omit<PhaseConfig, "inertFlowOnNm3PerH">> & { inertFlowOnNm3PerH?: number };
  private readonly drive = new Debounced();
  private readonly feed = new Debounced();
  private readonly hot = new Debounced();
  private readonly inert = new Debounced();
  private coalInside: boolean;
  private coalWhy: string;
  /** Feed was on since the drive last started: tells stopping from starting. */
  private fedThisRun = false;
  /** Since when the drive has run without feed (debounced), for the run-empty rule. */
  private noFeedSinceMs: number | null = null;
  /** Hot gas arrived (rising crossing) while the drive was stopped. */
  private warmUp = false;
  private phase: MillPhase = "unknown";
  private sinceMs: number | null = null;
  private lastNowMs: number | null = null;
  /** What the last step decided, as plain values (its result is built from them when read). */
  private readonly last = {
    inp: null as PhaseInputs | null,
    why: "drive-unknown" as ReasonKind,
    phase: "unknown" as MillPhase,
    sinceMs: 0,
    ranEmptyS: 0,
    fedThisRun: false,
    coalInside: false,
    coalWhy: "",
    gasInert: false,
    gasHot: false,
    driveRunning: null as boolean | null,
    feedOn: null as boolean | null,
    hotGas: null as boolean | null,
    inertOn: null as boolean | null,
  };
  private lastResult: PhaseResult | null = null;

  constructor(cfg: PhaseConfig) {
    const fn = "PhaseTracker";
    checkNumber(fn, "drivePowerRunningKW", cfg.drivePowerRunningKW, { min: 0, minExclusive: true, unit: "kW" });
    checkNumber(fn, "feedOnTPerH", cfg.feedOnTPerH, { min: 0, minExclusive: true, unit: "t/h" });
    checkNumber(fn, "warmGasC", cfg.warmGasC, { min: -273.15, unit: "°C" });
    if (cfg.inertFlowOnNm3PerH !== undefined) {
      checkNumber(fn, "inertFlowOnNm3PerH", cfg.inertFlowOnNm3PerH, { min: 0, minExclusive: true, unit: "Nm³/h" });
    }
    checkNumber(fn, "minDwellS", cfg.minDwellS, { min: 0, unit: "s" });
    const runEmptyS = cfg.runEmptyS ?? DEFAULT_RUN_EMPTY_S;
    checkNumber(fn, "runEmptyS", runEmptyS, { min: 0, minExclusive: true, unit: "s" });
    this.cfg = {
      drivePowerRunningKW: cfg.drivePowerRunningKW,
      feedOnTPerH: cfg.feedOnTPerH,
      warmGasC: cfg.warmGasC,
      inertFlowOnNm3PerH: cfg.inertFlowOnNm3PerH,
      minDwellS: cfg.minDwellS,
      runEmptyS,
      initialCoalInside: cfg.initialCoalInside ?? true,
    };
    this.coalInside = this.cfg.initialCoalInside;
    this.coalWhy = this.coalInside ? "assumed: no history since tracking began" : "taken as empty at the start of tracking";
  }

  update(inp: PhaseInputs): PhaseResult {
    this.step(inp);
    return this.result;
  }

  /**
   * As update(), returning only the phase: the reason and the inputs are kept as plain values
   * and built when `result` is read (the phase monitor runs this at every tick).
   */
  step(inp: PhaseInputs): MillPhase {
    const fn = "PhaseTracker.update";
    checkFinite(fn, "nowMs", inp.nowMs, "epoch ms");
    if (this.lastNowMs !== null && inp.nowMs < this.lastNowMs) {
      throw new RangeError(`${fn}: nowMs must not decrease; got ${inp.nowMs} after ${this.lastNowMs}`);
    }
    for (const k of NUMERIC_INPUTS) {
      const v = inp[k];
      if (v !== null) checkFinite(fn, k, v);
    }
    this.lastNowMs = inp.nowMs;
    const now = inp.nowMs;
    const dwellMs = this.cfg.minDwellS * 1000;
    const c = this.cfg;

    const driveRaw = inp.drivePowerKW === null ? null : inp.drivePowerKW >= c.drivePowerRunningKW;
    const feedRaw = inp.feedTPerH === null ? null : inp.feedTPerH >= c.feedOnTPerH;
    const hotRaw = inp.millInletTempC === null ? null : inp.millInletTempC >= c.warmGasC;
    const inertConfigured = c.inertFlowOnNm3PerH !== undefined;
    const inertRaw = !inertConfigured || inp.inertFlowNm3PerH === null ? null : inp.inertFlowNm3PerH >= c.inertFlowOnNm3PerH!;

    const hotBefore = this.hot.value;
    const driveBefore = this.drive.value;
    const D = this.drive.update(driveRaw, now, dwellMs);
    const F = this.feed.update(feedRaw, now, dwellMs);
    const H = this.hot.update(hotRaw, now, dwellMs);
    const I = this.inert.update(inertRaw, now, dwellMs);
    // Warm-up is hot gas *arriving*: a rising crossing (or the first sight) with the drive not running.
    if (H === false || D === true) this.warmUp = false;
    else if (H === true && hotBefore !== true) this.warmUp = true;

    let phase: MillPhase;
    let why: ReasonKind;
    let ranEmptyS = 0;

    if (inp.maintenance === true) {
      phase = "maintenance";
      why = "maintenance";
      if (this.coalInside) {
        this.coalInside = false;
        this.coalWhy = "cleared by maintenance";
      }
      this.fedThisRun = false;
      this.noFeedSinceMs = null;
      this.warmUp = false;
    } else if (inp.trip === true) {
      // The protection system stopped the mill; what was fed and not run out is still inside.
      if (F === true) this.coalInside = true;
      if (this.coalInside && (driveBefore === true || F === true)) this.coalWhy = "tripped before the mill ran empty";
      this.drive.force(false);
      this.feed.force(false);
      this.fedThisRun = false;
      this.noFeedSinceMs = null;
      this.warmUp = false;
      phase = this.coalInside ? "standstill-loaded" : "standstill-empty";
      why = "trip";
    } else if (driveRaw === null || D === null) {
      phase = "unknown";
      why = "drive-unknown";
      this.noFeedSinceMs = null; // running empty cannot be proven without the drive
    } else if (D) {
      if (feedRaw === null || F === null) {
        phase = "unknown";
        why = "feed-unknown";
        this.noFeedSinceMs = null;
      } else if (F) {
        this.coalInside = true;
        this.coalWhy = "fed in this run";
        this.fedThisRun = true;
        this.noFeedSinceMs = null;
        phase = "grinding";
        why = "grinding";
      } else {
        this.noFeedSinceMs ??= now;
        ranEmptyS = (now - this.noFeedSinceMs) / 1000;
        if (this.coalInside && ranEmptyS >= c.runEmptyS) {
          this.coalInside = false;
          this.coalWhy = `ran empty: drive ran ${fmt(ranEmptyS)} s without feed`;
        }
        phase = this.fedThisRun ? "stopping" : "starting";
        why = "running-empty";
      }
    } else {
      // drive stopped
      this.fedThisRun = false;
      this.noFeedSinceMs = null;
      if (driveBefore === true && this.coalInside) this.coalWhy = "the drive stopped before the mill ran empty";
      if (F === true && feedRaw !== null && !this.coalInside) {
        this.coalInside = true;
        this.coalWhy = "fed while the drive was stopped";
      }
      if (this.coalInside) {
        phase = "standstill-loaded";
        why = "stopped-loaded";
      } else if (inertConfigured && (inertRaw === null || I === null)) {
        phase = "unknown";
        why = "inert-unknown";
      } else if (I === true) {
        phase = "inerting";
        why = "inerting";
      } else if (hotRaw === null || H === null) {
        phase = "unknown";
        why = "hot-unknown";
      } else if (this.warmUp) {
        phase = "warm-up";
        why = "warm-up";
      } else {
        phase = "standstill-empty";
        why = "stopped-empty";
      }
    }

    if (phase !== this.phase || this.sinceMs === null) {
      this.phase = phase;
      this.sinceMs = now;
    }
    const l = this.last;
    l.inp = inp;
    l.why = why;
    l.phase = phase;
    l.sinceMs = this.sinceMs;
    l.ranEmptyS = ranEmptyS;
    l.fedThisRun = this.fedThisRun;
    l.coalInside = this.coalInside;
    l.coalWhy = this.coalWhy;
    l.gasInert = I === true && inertRaw !== null;
    l.gasHot = H === true && hotRaw !== null;
    l.driveRunning = this.drive.value;
    l.feedOn = this.feed.value;
    l.hotGas = this.hot.value;
    l.inertOn = inertConfigured ? this.inert.value : null;
    this.lastResult = null;
    return phase;
  }

  /** The result of the last update or step (built when first read after it). */
  get result(): PhaseResult {
    const l = this.last;
    if (this.lastResult === null) {
      const inp = l.inp!;
      this.lastResult = {
        phase: l.phase,
        sinceMs: l.sinceMs,
        reason: this.reasonText(),
        inputs: {
          drivePowerKW: inp.drivePowerKW,
          feedTPerH: inp.feedTPerH,
          millInletTempC: inp.millInletTempC,
          millOutletTempC: inp.millOutletTempC,
          inertFlowNm3PerH: inp.inertFlowNm3PerH,
          trip: inp.trip ?? null,
          maintenance: inp.maintenance ?? null,
          driveRunning: l.driveRunning,
          feedOn: l.feedOn,
          hotGas: l.hotGas,
          inertOn: l.inertOn,
          coalInside: l.coalInside,
        },
      };
    }
    return this.lastResult;
  }

  private reasonText(): string {
    const l = this.last;
    const inp = l.inp!;
    const c = this.cfg;
    switch (l.why) {
      case "maintenance":
        return "maintenance declared";
      case "trip":
        return `trip signal active; ${l.coalInside ? "coal inside" : "mill empty"} (${l.coalWhy})`;
      case "drive-unknown":
        return "drive power unknown";
      case "feed-unknown":
        return "drive running, feed unknown";
      case "grinding":
        return `drive running (${fmt(inp.drivePowerKW!)} kW >= ${c.drivePowerRunningKW} kW) and feed on (${fmt(inp.feedTPerH!)} t/h >= ${c.feedOnTPerH} t/h)`;
      case "running-empty":
        return (
          (l.fedThisRun ? "feed stopped while the drive runs" : "drive running, no feed yet") +
          (l.coalInside ? `; running without feed for ${fmt(l.ranEmptyS)} s of ${c.runEmptyS} s to run empty` : "; mill run empty")
        );
      case "stopped-loaded": {
        const notes: string[] = [];
        if (l.gasInert) notes.push("inert gas flowing");
        if (l.gasHot) notes.push("hot gas at the inlet");
        return `drive stopped, coal inside (${l.coalWhy})${notes.length ? ` (${notes.join(", ")})` : ""}`;
      }
      case "inert-unknown":
        return "drive stopped, inert-gas flow unknown";
      case "inerting":
        return `drive stopped, inert-gas flow ${fmt(inp.inertFlowNm3PerH!)} Nm³/h >= ${c.inertFlowOnNm3PerH} Nm³/h`;
      case "hot-unknown":
        return "drive stopped, mill inlet temperature unknown";
      case "warm-up":
        return `drive stopped, hot gas arriving: inlet ${fmt(inp.millInletTempC!)} °C rose above ${c.warmGasC} °C`;
      case "stopped-empty":
        return `drive stopped, mill empty (${l.coalWhy})`;
    }
  }
}

const NUMERIC_INPUTS = ["drivePowerKW", "feedTPerH", "millOutletTempC", "millInletTempC", "inertFlowNm3PerH"] as const;

/** Which rule decided the phase: the reason's text is built from it when asked. */
type ReasonKind =
  | "maintenance"
  | "trip"
  | "drive-unknown"
  | "feed-unknown"
  | "grinding"
  | "running-empty"
  | "stopped-loaded"
  | "inert-unknown"
  | "inerting"
  | "hot-unknown"
  | "warm-up"
  | "stopped-empty";

function fmt(x: number): string {
  return Number.isInteger(x) ? String(x) : String(Number(x.toPrecision(4)));
}
