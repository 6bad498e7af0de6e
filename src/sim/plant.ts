// Scenarios of the simulated plant (Tarnholm Works, coal grinding line 2), frame by frame.
//
// A scenario drives the process model (model.ts) with operator actions over simulated
// time and reads the instruments after every step. Frame k is at
// startTimeMs + k·stepS·1000 (k = 0 .. ceil(durationS/stepS) − 1). Noise comes from a
// seeded generator: the same name, options and seed give identical frames.
//
//   startup          cold standstill → hot-gas generator lit and fans on at 120 s →
//                    warm-up and inerting (the filter outlet sits near or below its water
//                    dew point for some minutes: combustion water on cold steel) → drive
//                    on once the filter outlet is above 65 °C and the mill O2 below 10 %
//                    wet (about 29 min) → feed ramps to 30 t/h over 5 min → grinding
//                    until 60 min. Designed as a clean start-up for CO rules: no CO
//                    reading above 80 ppm, and the least-squares CO slope over any
//                    5-minute window below 2 ppm/min (test/sim/plant.test.ts proves it).
//   filter-smoulder  steady grinding; at 600 s a smouldering nest in the bag filter adds
//                    1·τ + 0.6·τ² ppm CO at the filter outlet (τ in minutes since onset);
//                    from τ = 10 min the filter outlet gas creeps up by 0.15 K/min. The
//                    mill outlet CO stays at its baseline: by design the share of the
//                    nest's CO carried back in the recirculated gas is left out, which
//                    gives a clean rise-across-the-filter case. 40 min.
//   demo             startup as above, grinding, a filter smoulder from 45 min for 20 min,
//                    then the operators deal with it: the extra CO decays with a 3 min
//                    time constant, the extra heat with 10 min. 80 min.

import { gaussian, mulberry32 } from "./prng.js";
import { GRINDING_COMMANDS, PlantModel, STANDSTILL_COMMANDS, TAG_SPECS, type PlantCommands } from "./model.js";

export const SIM_TAGS: readonly { tag: string; description: string; unit: string }[] = TAG_SPECS.map((s) => ({
  tag: s.tag,
  description: s.description,
  unit: s.unit,
}));

export interface SimFrame {
  tMs: number;
  values: { tag: string; value: number }[];
}

export interface Scenario {
  name: string;
  description: string;
  durationS: number;
  /** Start of the scenario's hazard (simulated seconds from the start), or null when it has none. */
  onsetS: number | null;
  stepS: number;
  /** The next frame, or null once the scenario has ended. */
  next(): SimFrame | null;
}

/** Start conditions practised before the first coal [CP]. */
const FEED_START_FILTER_OUTLET_C = 65;
const FEED_START_O2_MAX_PCT_WET = 10;
const LIGHT_OFF_S = 120;
/** Between the drive start and the first coal (rollers down, feeder started). */
const DRIVE_TO_FEED_S = 60;
const FEED_RAMP_S = 300;
const WARMUP_OUTLET_SP_C = 85;
const WARMUP_O2_SP_PCT_WET = 9;
const WARMUP_N2_PURGE_NM3_PER_H = 1_500;

/** Smoulder shape, shared by filter-smoulder and demo. */
export function smoulderExtraCoPpm(minutesSinceOnset: number): number {
  const tau = Math.max(0, minutesSinceOnset);
  return 1 * tau + 0.6 * tau * tau;
}
function smoulderExtraK(minutesSinceOnset: number): number {
  return 0.15 * Math.max(0, minutesSinceOnset - 10);
}

/** The start-up sequence (startup and demo): operator actions from time and plant state. */
class StartupSequence {
  driveOnAtS: number | null = null;

  commands(tS: number, plant: PlantModel): PlantCommands {
    if (tS < LIGHT_OFF_S) return { ...STANDSTILL_COMMANDS };
    if (
      this.driveOnAtS === null &&
      plant.filterOutletC > FEED_START_FILTER_OUTLET_C &&
      plant.o2Frac * 100 < FEED_START_O2_MAX_PCT_WET
    ) {
      this.driveOnAtS = tS;
    }
    if (this.driveOnAtS === null) {
      return {
        ...STANDSTILL_COMMANDS,
        fansOn: true,
        hggLit: true,
        millOutletSpC: WARMUP_OUTLET_SP_C,
        o2SpPctWet: WARMUP_O2_SP_PCT_WET,
        n2PurgeNm3PerH: WARMUP_N2_PURGE_NM3_PER_H,
      };
    }
    const rampS = tS - this.driveOnAtS - DRIVE_TO_FEED_S;
    const feed = rampS <= 0 ? 0 : GRINDING_COMMANDS.feedSpTPerH * Math.min(1, rampS / FEED_RAMP_S);
    return { ...GRINDING_COMMANDS, feedSpTPerH: feed };
  }
}

interface ScenarioDef {
  description: string;
  durationS: number;
  onsetS: number | null;
  /** Prepare the plant (state at t = 0) and return the command source for time tS. */
  setup(plant: PlantModel): (tS: number) => PlantCommands;
}

const SMOULDER_ONSET_S = 600;
const DEMO_ONSET_S = 45 * 60;
const DEMO_RESPONSE_S = DEMO_ONSET_S + 20 * 60;
const DEMO_CO_RECOVERY_TAU_S = 3 * 60;
const DEMO_HEAT_RECOVERY_TAU_S = 10 * 60;

const SCENARIOS: Record<string, ScenarioDef> = {
  startup: {
    description:
      "Cold standstill to steady grinding: hot-gas generator lit and fans on at 120 s, warm-up and inerting, " +
      "drive on once the filter outlet exceeds 65 °C with mill O2 below 10 % wet, feed ramped to 30 t/h over 5 min, grinding to 60 min.",
    durationS: 3600,
    onsetS: null,
    setup(plant) {
      const seq = new StartupSequence();
      return (tS) => seq.commands(tS, plant);
    },
  },
  "filter-smoulder": {
    description:
      "Steady grinding; from 600 s a smouldering nest in the bag filter adds 1·τ + 0.6·τ² ppm CO at the filter outlet " +
      "(τ in minutes since onset), the filter outlet gas creeps up 0.15 K/min from 10 min after onset; mill outlet CO stays at baseline. 40 min.",
    durationS: 2400,
    onsetS: SMOULDER_ONSET_S,
    setup(plant) {
      plant.settleGrinding();
      return (tS) => {
        const minutes = (tS - SMOULDER_ONSET_S) / 60;
        if (minutes <= 0) return { ...GRINDING_COMMANDS };
        return { ...GRINDING_COMMANDS, filterCoExtraPpm: smoulderExtraCoPpm(minutes), filterExtraK: smoulderExtraK(minutes) };
      };
    },
  },
  demo: {
    description:
      "Start-up as in 'startup', grinding, a bag filter smoulder from 45 min rising for 20 min, then the operators deal with it " +
      "(extra CO decays with a 3 min time constant). 80 min.",
    durationS: 4800,
    onsetS: DEMO_ONSET_S,
    setup(plant) {
      const seq = new StartupSequence();
      const peakMinutes = (DEMO_RESPONSE_S - DEMO_ONSET_S) / 60;
      return (tS) => {
        const cmd = seq.commands(tS, plant);
        if (tS <= DEMO_ONSET_S) return cmd;
        if (tS <= DEMO_RESPONSE_S) {
          const minutes = (tS - DEMO_ONSET_S) / 60;
          return { ...cmd, filterCoExtraPpm: smoulderExtraCoPpm(minutes), filterExtraK: smoulderExtraK(minutes) };
        }
        const sinceResponseS = tS - DEMO_RESPONSE_S;
        return {
          ...cmd,
          filterCoExtraPpm: smoulderExtraCoPpm(peakMinutes) * Math.exp(-sinceResponseS / DEMO_CO_RECOVERY_TAU_S),
          filterExtraK: smoulderExtraK(peakMinutes) * Math.exp(-sinceResponseS / DEMO_HEAT_RECOVERY_TAU_S),
        };
      };
    },
  },
};

export function scenarioNames(): string[] {
  return Object.keys(SCENARIOS);
}

/** Largest step accepted: the scenarios' ramps (5 min) need a few steps to be seen. */
const MAX_STEP_S = 60;

export function createScenario(name: string, opts: { startTimeMs: number; stepS?: number; seed?: number }): Scenario {
  const def = Object.hasOwn(SCENARIOS, name) ? SCENARIOS[name] : undefined;
  if (def === undefined) {
    throw new Error(`unknown simulator scenario "${name}": expected one of ${scenarioNames().map((n) => `"${n}"`).join(", ")}`);
  }
  const { startTimeMs } = opts;
  if (typeof startTimeMs !== "number" || !Number.isFinite(startTimeMs)) {
    throw new Error(`scenario "${name}": startTimeMs: expected epoch milliseconds (a finite number), found ${String(startTimeMs)}`);
  }
  const stepS = opts.stepS ?? 1;
  if (typeof stepS !== "number" || !(stepS > 0) || stepS > MAX_STEP_S) {
    throw new Error(`scenario "${name}": stepS: expected a number of seconds in (0, ${MAX_STEP_S}], found ${String(opts.stepS)}`);
  }
  const seed = opts.seed ?? 1;
  if (typeof seed !== "number" || !Number.isInteger(seed)) {
    throw new Error(`scenario "${name}": seed: expected an integer, found ${String(opts.seed)}`);
  }

  const plant = new PlantModel();
  const commandsAt = def.setup(plant);
  const normal = gaussian(mulberry32(seed));
  const frameCount = Math.ceil(def.durationS / stepS - 1e-9);
  let k = 0;

  return {
    name,
    description: def.description,
    durationS: def.durationS,
    onsetS: def.onsetS,
    stepS,
    next(): SimFrame | null {
      if (k >= frameCount) return null;
      if (k > 0) {
        // Advance from frame k-1 to k with the operator actions decided at frame k-1.
        plant.step(stepS, commandsAt((k - 1) * stepS));
      }
      const frame: SimFrame = { tMs: startTimeMs + k * stepS * 1000, values: plant.measure(normal) };
      k++;
      return frame;
    },
  };
}
