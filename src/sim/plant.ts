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
//   wet-coal-surge   steady grinding; from 600 s the raw coal moisture rises linearly from
//                    12 % to 32 % over 15 min (wet coal from the stockpile reaches the feeder).
//                    Three times the water is evaporated (9.3 t/h), the gas H2O rises from 14 %
//                    to about 37 % and its dew point from 52 °C to about 74 °C; the inerting
//                    controller gives way to the steam (N2 down to a tenth), the hot-gas
//                    generator reaches its maximum firing and the mill outlet temperature sags
//                    about 2 K below its set point. The bag filter outlet's dew point margin
//                    shrinks steadily from about 31 K to under 10 K. The controller holds the
//                    wet O2 at 9 %, so the dry-basis O2 rises with the steam (to about 14 %
//                    dry): a limit on a dry basis sees that too. 40 min.
//   o2-creep-damper  steady grinding; from 600 s a fresh-air damper sticks open and keeps
//                    opening. Its air is not measured, so the inerting controller's
//                    feed-forward does not answer it: the O2 at mill and filter creeps up
//                    about 0.15 %-pt/min (wet) through the marginal band past the limits. 40 min.
//   purge-after-trip steady grinding; at 600 s the protection system trips the mill: drive
//                    and feeder stop at once, the burner goes out, the inerting controller is
//                    interlocked off, the coal stays inside. The fan runs on and draws false
//                    air in: O2 rises toward air. From 900 s the operators stop the fan and
//                    purge with 3,000 Nm³/h N2 by hand; with no circulation part of it
//                    short-circuits to the vent, so O2 decays exponentially, more slowly than
//                    a well-mixed loop would, back below the limit (about 10 min into the
//                    purge, under 5 % at the end). In the standing gas the CO from the coal
//                    left inside builds up (to about 100 ppm). 60 min.
//   frozen-co-analyser the filter smoulder of filter-smoulder, frame for frame, except that
//                    the bag filter outlet CO reading (BF2-AT-214) freezes at its value at
//                    onset + 3 min and stays exactly constant while the real CO keeps rising;
//                    the mill outlet analyser stays live. 40 min.
//   analyser-calibration steady grinding; at 900 s the bag filter O2/CO analyser (BF2-AT-213/
//                    214) starts its automatic calibration: its status output BF2-AS-213 goes
//                    to 1 (function check), 10 s later the sequencer switches the cell from
//                    sample gas to zero gas (N2: 0 % O2, 0 ppm CO) for 120 s, then CO span gas
//                    (800 ppm CO in N2) for 120 s, then O2 span gas (instrument air, 20.9 % O2)
//                    for 120 s (each long enough for about 93 % of the step with the
//                    analyser's 40-45 s time constants), then back to sample gas; the status
//                    stays at 1 for 210 s more while the sample line and cell flush (about 5
//                    time constants), so the readings are back on the process before it
//                    drops: about 10 min in function check. The process does not change. 40 min.
//   trip-loaded-co-rise steady grinding; at 600 s the protection system trips the mill and
//                    isolates the circuit: drive, feeder and fan stop, the burner goes out,
//                    the inerting controller is interlocked off, the coal stays on the table,
//                    in the classifier and the hoppers (trip output VM2-UZ-130 at 1). From
//                    660 s the operators keep the loaded circuit inert with a 1,500 Nm³/h N2
//                    blanket by hand. In the standing gas the CO builds up: first from the
//                    oxidation of the freshly ground coal left inside (it fades with the
//                    16-minute time constant of the model), then from a smouldering nest on
//                    the table that starts 5 min after the trip and doubles its CO output
//                    every 20 min (self-heating speeds up as it warms). 70 min.
//   trip-flood       steady grinding; at 1200 s the protection system trips the mill: drive
//                    and feeder stop, the burner goes out, the inerting controller is
//                    interlocked off, the fan runs on and draws false air in (as in
//                    purge-after-trip): O2 rises toward air. The hot coal on the table and the
//                    hot fines in the filter hopper glow in that air: CO from the mill rises
//                    toward 4 Nm³/h and 80 ppm more at the filter outlet (2-minute time
//                    constant). At 1500 s the operators stop the fan and purge with 3,000
//                    Nm³/h N2; starved of air the glow dies down (2-minute time constant) and
//                    the O2 falls back. One event upsets O2, CO and the phase at once: many
//                    advisories within minutes. 60 min.
//   o2-chatter       steady grinding; at 600 s the shift raises the inerting controller's
//                    O2 set point (to save N2) so that the bag filter O2 settles right at the
//                    notice threshold of its margin (11.0 % dry, 2 %-pt below the 13 % dry
//                    LOC-based limit of the demo config); the reading's noise carries it back
//                    and forth across that threshold. At 1500 s they put the set point back to
//                    9 % wet. 40 min.

import { gaussian, mulberry32 } from "./prng.js";
import {
  AIR_O2_FRAC_WET,
  FLUE_O2_FRAC,
  GRINDING_COMMANDS,
  PlantModel,
  RAW_COAL_MOISTURE,
  STANDSTILL_COMMANDS,
  STATUS_TAGS,
  TAG_SPECS,
  type CheckGas,
  type PlantCommands,
} from "./model.js";

/** Every tag of a frame, in frame order: the measured tags, then the discrete status outputs. */
export const SIM_TAGS: readonly { tag: string; description: string; unit: string }[] = [
  ...TAG_SPECS.map((s) => ({ tag: s.tag, description: s.description, unit: s.unit })),
  ...STATUS_TAGS,
];

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
  /** Instrument faults: change the frame's readings at time tS in place (after the noise is drawn). */
  faults?(): (tS: number, values: { tag: string; value: number }[]) => void;
}

const SMOULDER_ONSET_S = 600;
const DEMO_ONSET_S = 45 * 60;
const DEMO_RESPONSE_S = DEMO_ONSET_S + 20 * 60;
const DEMO_CO_RECOVERY_TAU_S = 3 * 60;
const DEMO_HEAT_RECOVERY_TAU_S = 10 * 60;

export const WET_COAL_ONSET_S = 600;
/** Raw coal moisture after the surge (mass fraction, wet basis) and the time it takes to arrive. */
export const WET_COAL_MOISTURE = 0.32;
export const WET_COAL_RAMP_S = 900;

export const DAMPER_ONSET_S = 600;
/** Creep of the loop O2 the stuck damper's air would give at the pre-onset flows, %-pt/min wet. */
export const DAMPER_CREEP_PCT_PER_MIN = 0.15;

export const TRIP_AT_S = 600;
/** The operators stop the fan and start the N2 purge this long after the trip. */
export const PURGE_START_S = TRIP_AT_S + 300;
export const PURGE_N2_NM3_PER_H = 3_000;

export const FROZEN_CO_ONSET_S = SMOULDER_ONSET_S;
export const FROZEN_CO_AT_S = FROZEN_CO_ONSET_S + 180;
export const FROZEN_CO_TAG = "BF2-AT-214";

/** Calibration of the bag filter O2/CO analyser (analyser-calibration). */
export const CAL_STATUS_ON_S = 900;
export const CAL_STATUS_OFF_S = 1480;
/** The check gases in turn, each from its start (s) until the next one's or until CAL_SAMPLE_GAS_S. */
export const CAL_GASES: readonly (CheckGas & { fromS: number })[] = [
  { fromS: 910, name: "zero gas (N2)", o2PctDry: 0, coPpm: 0 },
  { fromS: 1030, name: "CO span gas (800 ppm CO in N2)", o2PctDry: 0, coPpm: 800 },
  { fromS: 1150, name: "O2 span gas (instrument air)", o2PctDry: 20.9, coPpm: 0 },
];
export const CAL_SAMPLE_GAS_S = 1270;

export const LOADED_TRIP_AT_S = 600;
/** The N2 blanket the operators put on the tripped, isolated circuit, and when. */
export const LOADED_BLANKET_AT_S = LOADED_TRIP_AT_S + 60;
export const LOADED_BLANKET_N2_NM3_PER_H = 1_500;
/** The smouldering nest on the table: start, CO output at the start, doubling time. */
export const NEST_START_S = LOADED_TRIP_AT_S + 300;
export const NEST_CO_NM3_PER_H = 0.1;
export const NEST_DOUBLING_S = 20 * 60;

export const FLOOD_TRIP_AT_S = 1200;
export const FLOOD_PURGE_START_S = FLOOD_TRIP_AT_S + 300;
/** The glow in the air drawn through the tripped mill: CO from the bed, extra CO at the filter outlet. */
export const GLOW_MILL_CO_NM3_PER_H = 4;
export const GLOW_FILTER_CO_PPM = 80;
const GLOW_RISE_TAU_S = 120;
const GLOW_DECAY_TAU_S = 120;

export const CHATTER_ONSET_S = 600;
export const CHATTER_END_S = 1500;
/** The bag filter O2 the raised set point settles at: the demo config's notice threshold of its margin. */
export const CHATTER_FILTER_O2_PCT_DRY = 11.0;

/**
 * The raised O2 set point (wet, at the mill outlet) at which the bag filter O2 settles at
 * CHATTER_FILTER_O2_PCT_DRY. O2_dry = O2_wet / (1 − x_H2O), but less N2 also leaves more H2O in
 * the loop, so the set point is found by a few fixed-point steps on a noiseless copy of the
 * plant, each run for an hour at the candidate set point.
 */
function chatterSetpointPctWet(): number {
  const settledDryPct = (spPctWet: number) => {
    const p = new PlantModel();
    p.settleGrinding();
    for (let i = 0; i < 360; i++) p.step(10, { ...GRINDING_COMMANDS, o2SpPctWet: spPctWet });
    return (100 * p.o2Frac) / (1 - p.h2oFrac);
  };
  let sp = GRINDING_COMMANDS.o2SpPctWet;
  for (let i = 0; i < 3; i++) sp *= CHATTER_FILTER_O2_PCT_DRY / settledDryPct(sp);
  return sp;
}

/** The filter smoulder's commands (filter-smoulder and frozen-co-analyser). */
function smoulderCommands(tS: number): PlantCommands {
  const minutes = (tS - SMOULDER_ONSET_S) / 60;
  if (minutes <= 0) return { ...GRINDING_COMMANDS };
  return { ...GRINDING_COMMANDS, filterCoExtraPpm: smoulderExtraCoPpm(minutes), filterExtraK: smoulderExtraK(minutes) };
}

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
      return smoulderCommands;
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
  "wet-coal-surge": {
    description:
      `Steady grinding; from ${WET_COAL_ONSET_S} s the raw coal moisture rises from ${RAW_COAL_MOISTURE * 100} % to ${WET_COAL_MOISTURE * 100} % ` +
      `over ${WET_COAL_RAMP_S / 60} min: more water evaporated, gas H2O and dew point up, mill outlet temperature sags a little; ` +
      "the bag filter outlet dew point margin shrinks from about 30 K to about 10 K. 40 min.",
    durationS: 2400,
    onsetS: WET_COAL_ONSET_S,
    setup(plant) {
      plant.settleGrinding();
      return (tS) => {
        const share = Math.min(1, Math.max(0, (tS - WET_COAL_ONSET_S) / WET_COAL_RAMP_S));
        return { ...GRINDING_COMMANDS, rawCoalMoisture: RAW_COAL_MOISTURE + share * (WET_COAL_MOISTURE - RAW_COAL_MOISTURE) };
      };
    },
  },
  "o2-creep-damper": {
    description:
      `Steady grinding; from ${DAMPER_ONSET_S} s a fresh-air damper sticks open and keeps opening; its air is not measured, so the ` +
      `inerting controller does not answer it: O2 at mill and filter creeps up about ${DAMPER_CREEP_PCT_PER_MIN} %-pt/min (wet) ` +
      "through the marginal band and past the limits. 40 min.",
    durationS: 2400,
    onsetS: DAMPER_ONSET_S,
    setup(plant) {
      plant.settleGrinding();
      // The damper's air for a loop with the pre-onset fresh flows whose O2 would rise by the
      // creep rate: x(t) = (O2_in + a·A)/(n + A) solved for A, with a the O2 of air.
      const f = plant.freshFlows();
      const totalNm3PerH = f.flue + f.falseAir + f.n2 + f.steam;
      const o2InNm3PerH = f.flue * FLUE_O2_FRAC + f.falseAir * AIR_O2_FRAC_WET;
      const x0 = o2InNm3PerH / totalNm3PerH;
      return (tS) => {
        const minutes = (tS - DAMPER_ONSET_S) / 60;
        if (minutes <= 0) return { ...GRINDING_COMMANDS };
        const x = x0 + (DAMPER_CREEP_PCT_PER_MIN / 100) * minutes;
        return { ...GRINDING_COMMANDS, damperAirNm3PerH: (x * totalNm3PerH - o2InNm3PerH) / (AIR_O2_FRAC_WET - x) };
      };
    },
  },
  "purge-after-trip": {
    description:
      `Steady grinding; at ${TRIP_AT_S} s the mill trips (drive and feed to zero at once, burner out, inerting controller off, ` +
      "coal left inside) while the fan runs on and draws false air in: O2 rises toward air. " +
      `From ${PURGE_START_S} s the operators stop the fan and purge with ${PURGE_N2_NM3_PER_H} Nm³/h N2: O2 decays, more slowly ` +
      "than a well-mixed loop would, back below the limit. 60 min.",
    durationS: 3600,
    onsetS: TRIP_AT_S,
    setup(plant) {
      plant.settleGrinding();
      return (tS) => {
        if (tS < TRIP_AT_S) return { ...GRINDING_COMMANDS };
        const tripped: PlantCommands = { ...STANDSTILL_COMMANDS, fansOn: true, trip: true };
        if (tS < PURGE_START_S) return tripped;
        return { ...tripped, fansOn: false, n2ManualNm3PerH: PURGE_N2_NM3_PER_H };
      };
    },
  },
  "frozen-co-analyser": {
    description:
      "The bag filter smoulder of 'filter-smoulder', except that the bag filter outlet CO analyser (BF2-AT-214) freezes at its " +
      `reading at ${FROZEN_CO_AT_S} s (onset + 3 min) and stays exactly constant while the real CO keeps rising; the mill outlet analyser stays live. 40 min.`,
    durationS: 2400,
    onsetS: FROZEN_CO_ONSET_S,
    setup(plant) {
      plant.settleGrinding();
      return smoulderCommands;
    },
    faults() {
      let held: number | null = null;
      return (tS, values) => {
        if (tS < FROZEN_CO_AT_S) return;
        const v = values.find((x) => x.tag === FROZEN_CO_TAG)!;
        held ??= v.value;
        v.value = held;
      };
    },
  },
  "analyser-calibration": {
    description:
      `Steady grinding; from ${CAL_STATUS_ON_S} s the bag filter O2/CO analyser (BF2-AT-213/214) calibrates: status BF2-AS-213 at 1 ` +
      `(function check), then ${CAL_GASES.map((g) => g.name).join(", ")} for 120 s each, sample gas again from ${CAL_SAMPLE_GAS_S} s, ` +
      `status back to 0 at ${CAL_STATUS_OFF_S} s once the cell has flushed. The process does not change. 40 min.`,
    durationS: 2400,
    onsetS: CAL_STATUS_ON_S,
    setup(plant) {
      plant.settleGrinding();
      return (tS) => {
        const inCheck = tS >= CAL_STATUS_ON_S && tS < CAL_STATUS_OFF_S;
        const gas = tS < CAL_SAMPLE_GAS_S ? CAL_GASES.filter((g) => tS >= g.fromS).at(-1) : undefined;
        return {
          ...GRINDING_COMMANDS,
          bf2AnalyserInCheck: inCheck,
          bf2AnalyserCheckGas: gas ? { name: gas.name, o2PctDry: gas.o2PctDry, coPpm: gas.coPpm } : null,
        };
      };
    },
  },
  "trip-loaded-co-rise": {
    description:
      `Steady grinding; at ${LOADED_TRIP_AT_S} s the mill trips with its fan (drive, feeder and fan stop, burner out, inerting off, ` +
      `coal left inside, trip output VM2-UZ-130 at 1); from ${LOADED_BLANKET_AT_S} s a ${LOADED_BLANKET_N2_NM3_PER_H} Nm³/h N2 blanket by hand. ` +
      "CO builds up in the standing gas: the oxidation of the coal left inside, then a smouldering nest on the table from " +
      `${NEST_START_S} s (${NEST_CO_NM3_PER_H} Nm³/h CO, doubling every ${NEST_DOUBLING_S / 60} min). 70 min.`,
    durationS: 4200,
    onsetS: LOADED_TRIP_AT_S,
    setup(plant) {
      plant.settleGrinding();
      return (tS) => {
        if (tS < LOADED_TRIP_AT_S) return { ...GRINDING_COMMANDS };
        return {
          ...STANDSTILL_COMMANDS,
          trip: true,
          n2ManualNm3PerH: tS >= LOADED_BLANKET_AT_S ? LOADED_BLANKET_N2_NM3_PER_H : null,
          millCoExtraNm3PerH: tS >= NEST_START_S ? NEST_CO_NM3_PER_H * 2 ** ((tS - NEST_START_S) / NEST_DOUBLING_S) : 0,
        };
      };
    },
  },
  "trip-flood": {
    description:
      `Steady grinding; at ${FLOOD_TRIP_AT_S} s the mill trips; the fan runs on and draws false air in (O2 toward air), the hot coal ` +
      `on the table and the fines in the filter hopper glow in it (CO from the mill toward ${GLOW_MILL_CO_NM3_PER_H} Nm³/h, ` +
      `${GLOW_FILTER_CO_PPM} ppm more at the filter outlet). From ${FLOOD_PURGE_START_S} s the fan is stopped and the circuit purged ` +
      `with ${PURGE_N2_NM3_PER_H} Nm³/h N2; the glow dies down. Many advisories within minutes. 60 min.`,
    durationS: 3600,
    onsetS: FLOOD_TRIP_AT_S,
    setup(plant) {
      plant.settleGrinding();
      const glowAtStop = 1 - Math.exp(-(FLOOD_PURGE_START_S - FLOOD_TRIP_AT_S) / GLOW_RISE_TAU_S);
      return (tS) => {
        if (tS < FLOOD_TRIP_AT_S) return { ...GRINDING_COMMANDS };
        const purging = tS >= FLOOD_PURGE_START_S;
        const glow = purging
          ? glowAtStop * Math.exp(-(tS - FLOOD_PURGE_START_S) / GLOW_DECAY_TAU_S)
          : 1 - Math.exp(-(tS - FLOOD_TRIP_AT_S) / GLOW_RISE_TAU_S);
        return {
          ...STANDSTILL_COMMANDS,
          fansOn: !purging,
          trip: true,
          n2ManualNm3PerH: purging ? PURGE_N2_NM3_PER_H : null,
          millCoExtraNm3PerH: GLOW_MILL_CO_NM3_PER_H * glow,
          filterCoExtraPpm: GLOW_FILTER_CO_PPM * glow,
        };
      };
    },
  },
  "o2-chatter": {
    description:
      `Steady grinding; at ${CHATTER_ONSET_S} s the O2 set point is raised so that the bag filter O2 settles at ` +
      `${CHATTER_FILTER_O2_PCT_DRY} % dry, right at the notice threshold of its margin, and its noise carries it back and forth across it; ` +
      `at ${CHATTER_END_S} s the set point goes back to ${GRINDING_COMMANDS.o2SpPctWet} % wet. 40 min.`,
    durationS: 2400,
    onsetS: CHATTER_ONSET_S,
    setup(plant) {
      plant.settleGrinding();
      const spPctWet = chatterSetpointPctWet();
      return (tS) => (tS >= CHATTER_ONSET_S && tS < CHATTER_END_S ? { ...GRINDING_COMMANDS, o2SpPctWet: spPctWet } : { ...GRINDING_COMMANDS });
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
  const fault = def.faults?.();
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
      const values = plant.measure(normal);
      fault?.(k * stepS, values);
      const frame: SimFrame = { tMs: startTimeMs + k * stepS * 1000, values };
      k++;
      return frame;
    },
  };
}
