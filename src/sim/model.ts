// Lumped process model of Tarnholm Works coal grinding line 2 (an invented plant).
//
//            false air ─┐        N2 (IG2) ─┐
//                       ▼                  ▼
//   HG2 hot-gas ──▶ mixing ──▶ VM2 mill ──▶ duct ──▶ BF2 bag filter ──▶ fan ──┬──▶ vent (stack)
//   generator          ▲        ▲ coal feed                │ fine coal         │
//       ▲              │        │ (water evaporates)       ▼                   │
//       └──────────────┴────────┴──── recirculated gas ◀───┼───────────────────┘
//                                                     FS2 fine-coal silo
//
// Gas composition: one well-mixed loop volume. Fresh streams (hot-gas generator flue
// gas, false air, N2, evaporated water) enter, the same molar flow leaves by the vent.
// Temperatures: the mill and the filter are each a gas node exchanging heat with a
// lumped steel mass; the hot-gas generator firing is set by the mill outlet
// temperature controller. Every lag is advanced with its exact solution for a
// constant input, x <- x_eq + (x - x_eq)·exp(-dt/tau), so any step size is stable.
//
// Numbers marked [M] are from memory, [CP] common practice, the rest are design
// choices for this invented plant.

export const AMBIENT_TEMP_C = 12;
/** O2 in dry air, rounded as analysers are spanned [M]. */
export const O2_DRY_AIR_PCT = 20.9;
/** Ambient humidity: 60 % RH at 12 °C, 0.6 × 1.403 kPa / 101.325 kPa [M: saturation pressure at 12 °C]. */
export const AMBIENT_H2O_FRAC = 0.0083;
/** Normal molar volume of an ideal gas, Nm³/kmol (0 °C, 101.325 kPa). */
export const MOLAR_VOLUME_NM3_PER_KMOL = 22.414;
export const MOLAR_MASS_H2O_KG_PER_KMOL = 18.015;

/** Raw and product coal moisture (mass fractions, wet basis) of this plant's coal. */
export const RAW_COAL_MOISTURE = 0.12;
export const PRODUCT_COAL_MOISTURE = 0.015;

/**
 * Water evaporated in the mill, t/h:
 * feed × (w_raw − w_product) / (1 − w_product) (a mass balance on the dry coal).
 */
export function evaporationTPerH(feedTPerH: number, wRaw: number, wProduct: number): number {
  if (!(wProduct >= 0 && wProduct < 1) || !(wRaw >= wProduct && wRaw < 1)) {
    throw new Error(`moisture balance: expected 0 <= w_product <= w_raw < 1, found w_raw=${wRaw}, w_product=${wProduct}`);
  }
  return (Math.max(0, feedTPerH) * (wRaw - wProduct)) / (1 - wProduct);
}

/** Water vapour flow for a mass flow of water, Nm³/h (ideal gas). */
export function steamNm3PerH(waterTPerH: number): number {
  return ((waterTPerH * 1000) / MOLAR_MASS_H2O_KG_PER_KMOL) * MOLAR_VOLUME_NM3_PER_KMOL;
}

/**
 * H2O mole fraction after evaporating water into a gas stream:
 * x = (n_gas·x_gas + m_evap/18.015) / (n_gas + m_evap/18.015), flows in kmol/h.
 */
export function mixH2OFraction(gasNm3PerH: number, gasH2OFrac: number, waterTPerH: number): number {
  const gasKmolPerH = gasNm3PerH / MOLAR_VOLUME_NM3_PER_KMOL;
  const waterKmolPerH = (waterTPerH * 1000) / MOLAR_MASS_H2O_KG_PER_KMOL;
  const total = gasKmolPerH + waterKmolPerH;
  if (!(total > 0)) throw new Error(`moisture mixing: expected a positive total flow, found gas=${gasNm3PerH} Nm³/h, water=${waterTPerH} t/h`);
  return (gasKmolPerH * gasH2OFrac + waterKmolPerH) / total;
}

/** Exact first-order lag step toward a constant target. tau <= 0 means "follow at once". */
export function lag(value: number, target: number, dtS: number, tauS: number): number {
  if (!(tauS > 0)) return target;
  if (!Number.isFinite(tauS)) return value;
  return target + (value - target) * Math.exp(-dtS / tauS);
}

// ---- plant parameters ------------------------------------------------------------

/** Specific heat of the moist loop gas, kJ/(Nm³·K) [M: about 1.35-1.42 near 100 °C]. */
const CP_GAS_KJ_PER_NM3K = 1.4;
/** Fan flow through the mill: warm-up (reduced speed) and grinding, Nm³/h wet. */
const MILL_FLOW_WARMUP_NM3_PER_H = 30_000;
const MILL_FLOW_GRINDING_NM3_PER_H = 70_000;
/** Hot-gas generator: natural gas taken as CH4, LHV 35.8 MJ/Nm³ [M], efficiency 0.95, air ratio 1.3. */
const FUEL_LHV_MJ_PER_NM3 = 35.8;
const HGG_EFFICIENCY = 0.95;
const HGG_AIR_RATIO = 1.3;
// CH4 + 2 O2 + air ratio: per Nm³ CH4 the products are 1 CO2, 2 H2O, 7.52·λ N2 and 2(λ−1) O2.
export const FLUE_NM3_PER_NM3_FUEL = 1 + 2 + 7.52 * HGG_AIR_RATIO + 2 * (HGG_AIR_RATIO - 1);
export const FLUE_O2_FRAC = (2 * (HGG_AIR_RATIO - 1)) / FLUE_NM3_PER_NM3_FUEL;
export const FLUE_H2O_FRAC = 2 / FLUE_NM3_PER_NM3_FUEL;
/** CO leaving a well-tuned burner, ppm in the flue gas. */
const FLUE_CO_PPM = 15;
/** Share of the recirculated gas that tempers the flame inside the hot-gas generator. */
const HGG_TEMPERING_SHARE = 0.45;
const HGG_MIN_FIRE_KW = 800;
/** Warm-up firing is limited to spare the refractory and the bags [CP]; grinding may fire more. */
const HGG_MAX_WARMUP_KW = 4_500;
const HGG_MAX_GRINDING_KW = 7_000;
const BURNER_TAU_S = 45;
/** Burner load ramp, kW/s (300 kW/min) [CP: the load of a hot-gas generator is raised gradually]. */
const BURNER_RAMP_KW_PER_S = 300 / 60;

/** Steel: effective heat capacity kJ/K, gas-to-steel conductance kW/K, wall loss kW/K. */
const MILL_STEEL_KJ_PER_K = 4_500;
const MILL_GAS_STEEL_KW_PER_K = 60;
/** Massive parts (table, rollers, housing): large capacity, weak coupling; they set the warm-up heat demand. */
const MILL_MASSIVE_KJ_PER_K = 120_000;
const MILL_GAS_MASSIVE_KW_PER_K = 45;
const MILL_WALL_LOSS_KW_PER_K = 1.5;
const DUCT_LOSS_KW_PER_K = 0.5;
const FILTER_STEEL_KJ_PER_K = 8_000;
const FILTER_GAS_STEEL_KW_PER_K = 120;
const FILTER_WALL_LOSS_KW_PER_K = 1.2;
/** Specific heat of the coal with its remaining moisture, kJ/(kg·K) [M]. */
const CP_COAL_KJ_PER_KGK = 1.3;
/** Share of the drive power that ends up as heat in the gas and the product. */
const GRINDING_HEAT_SHARE = 0.75;

/** Gas-filled loop volume (mill, ducts, filter, hot-gas generator) in Nm³ at operating density. */
export const LOOP_VOLUME_NM3 = 1_000;
/** False air at the grinding filter outlet suction, Nm³/h; it scales with the suction. */
const FALSE_AIR_GRINDING_NM3_PER_H = 13_400;
const FILTER_OUTLET_GRINDING_MBAR = -35;
const FALSE_AIR_CO_PPM = 0.2;
export const AIR_O2_FRAC_WET = (O2_DRY_AIR_PCT / 100) * (1 - AMBIENT_H2O_FRAC);
/** CO from low-temperature oxidation of freshly ground coal, Nm³ CO per t of feed. */
const COAL_OXIDATION_CO_NM3_PER_T = 0.026;
/** Bed, classifier and fines take time to build up after the first feed. */
const COAL_OXIDATION_TAU_S = 16 * 60;
/** CO picked up in the filter hopper and on the bags (fines oxidising) while grinding, ppm. */
const FILTER_CO_OFFSET_PPM = 2;
// In grinding the vent must carry about 34,000 Nm³/h for 14 % H2O, while only about
// 3,000 Nm³/h of O2 may enter for 9 % O2: false air brings that O2, so the inert
// remainder (about 10,000-11,000 Nm³/h) is N2 in this plant.
const N2_MAX_NM3_PER_H = 14_000;
const N2_TAU_S = 60;
/** Purge with extra N2 while the loop O2 is this far above the set point; stop when this close. */
const N2_PURGE_ON_BAND_PCT = 1.5;
const N2_PURGE_OFF_BAND_PCT = 0.5;
/**
 * With the fans stopped nothing circulates the loop gas: this share of a manual N2 purge
 * short-circuits from the injection point to the vent without mixing (dead zones, the
 * shortest path), so the O2 falls more slowly than a well-mixed vessel would predict.
 * Design choice of this plant; common practice expects real purges to need more volume
 * changes than the well-mixed figure [CP].
 */
export const PURGE_SHORT_CIRCUIT_SHARE = 0.35;

/** Drive power at no load and the grinding share at nominal feed, kW. */
const DRIVE_IDLE_KW = 320;
const DRIVE_GRINDING_KW = 1_480;
const NOMINAL_FEED_T_PER_H = 30;

/** Operator and control-system actions for one step. */
export interface PlantCommands {
  fansOn: boolean;
  hggLit: boolean;
  driveOn: boolean;
  /** Weigh feeder set point, t/h; only followed while the drive runs. */
  feedSpTPerH: number;
  /** Set point of the mill outlet temperature controller; the burner's load ramp limits how fast it is reached. */
  millOutletSpC: number;
  /** Inerting controller set point on the mill outlet O2, % vol wet. */
  o2SpPctWet: number;
  /** N2 purge flow while O2 is well above the set point, Nm³/h. */
  n2PurgeNm3PerH: number;
  /** Scenario: extra CO at the filter outlet from a smouldering nest, ppm. */
  filterCoExtraPpm: number;
  /** Scenario: extra heating of the filter outlet gas from the nest, K. */
  filterExtraK: number;
  /** Raw coal moisture, mass fraction (wet basis); the product leaves at PRODUCT_COAL_MOISTURE. */
  rawCoalMoisture: number;
  /**
   * Scenario: fresh air through a damper stuck open, Nm³/h. It is not measured, so the
   * inerting controller's feed-forward does not see it (it only sees the O2 rise).
   */
  damperAirNm3PerH: number;
  /**
   * The protection system has tripped the mill: drive and feeder stop at once, the burner
   * goes out, the coal on the table, in the classifier and the hoppers stays inside. The fan
   * is not part of the trip: while `fansOn` it keeps its grinding speed.
   */
  trip: boolean;
  /** Operators' manual N2 flow, Nm³/h, overriding the inerting controller; null: controller in charge. */
  n2ManualNm3PerH: number | null;
  /**
   * Scenario: CO released by heating coal inside the circuit (a smouldering nest on the table,
   * a bed glowing in the air drawn through it), Nm³/h of CO. It mixes into the loop gas like the
   * coal's own oxidation CO, so both CO analysers see it. The O2 it consumes (half a volume per
   * volume of CO) is left out: a few Nm³/h against a loop of 1,000 Nm³.
   */
  millCoExtraNm3PerH: number;
  /**
   * Scenario: the bag filter O2/CO analyser (BF2-AT-213/214) reports function check on its
   * status output (BF2-AS-213): calibration, blowback. NAMUR NE 107 category C.
   */
  bf2AnalyserInCheck: boolean;
  /** Scenario: check gas at the bag filter analyser's cell instead of the sample gas; null: sample gas. */
  bf2AnalyserCheckGas: CheckGas | null;
}

/** A check gas (test gas) as an extractive analyser with a cooler sees it: dry basis. */
export interface CheckGas {
  name: string;
  o2PctDry: number;
  coPpm: number;
}

export const STANDSTILL_COMMANDS: PlantCommands = {
  fansOn: false,
  hggLit: false,
  driveOn: false,
  feedSpTPerH: 0,
  millOutletSpC: AMBIENT_TEMP_C,
  o2SpPctWet: 0,
  n2PurgeNm3PerH: 0,
  filterCoExtraPpm: 0,
  filterExtraK: 0,
  rawCoalMoisture: RAW_COAL_MOISTURE,
  damperAirNm3PerH: 0,
  trip: false,
  n2ManualNm3PerH: null,
  millCoExtraNm3PerH: 0,
  bf2AnalyserInCheck: false,
  bf2AnalyserCheckGas: null,
};

export const GRINDING_COMMANDS: PlantCommands = {
  fansOn: true,
  hggLit: true,
  driveOn: true,
  feedSpTPerH: NOMINAL_FEED_T_PER_H,
  millOutletSpC: 88,
  o2SpPctWet: 9,
  n2PurgeNm3PerH: 3_000,
  filterCoExtraPpm: 0,
  filterExtraK: 0,
  rawCoalMoisture: RAW_COAL_MOISTURE,
  damperAirNm3PerH: 0,
  trip: false,
  n2ManualNm3PerH: null,
  millCoExtraNm3PerH: 0,
  bf2AnalyserInCheck: false,
  bf2AnalyserCheckGas: null,
};

/** Per tag: description, unit, sensor lag, noise (1 sigma), display decimals, lower clamp. */
export interface TagSpec {
  tag: string;
  description: string;
  unit: string;
  sensorTauS: number;
  noiseSigma: number;
  decimals: number;
  min: number | null;
  max: number | null;
}

export const TAG_SPECS: readonly TagSpec[] = [
  { tag: "HG2-TT-011", description: "hot-gas generator outlet temperature", unit: "°C", sensorTauS: 30, noiseSigma: 1.0, decimals: 1, min: null, max: null },
  { tag: "VM2-TT-101", description: "mill inlet gas temperature", unit: "°C", sensorTauS: 15, noiseSigma: 0.3, decimals: 2, min: null, max: null },
  { tag: "VM2-TT-111", description: "mill outlet gas temperature", unit: "°C", sensorTauS: 15, noiseSigma: 0.15, decimals: 2, min: null, max: null },
  { tag: "VM2-PT-112", description: "mill outlet gauge pressure", unit: "mbar", sensorTauS: 3, noiseSigma: 0.15, decimals: 2, min: null, max: null },
  { tag: "VM2-AT-113", description: "mill outlet O2, in-situ probe, wet basis", unit: "% vol", sensorTauS: 8, noiseSigma: 0.04, decimals: 2, min: 0, max: 25 },
  { tag: "VM2-AT-114", description: "mill outlet CO", unit: "ppm", sensorTauS: 40, noiseSigma: 0.4, decimals: 1, min: 0, max: null },
  { tag: "VM2-JI-120", description: "mill main drive power", unit: "kW", sensorTauS: 2, noiseSigma: 10, decimals: 1, min: 0, max: null },
  { tag: "VM2-WI-121", description: "raw coal feed rate", unit: "t/h", sensorTauS: 5, noiseSigma: 0.15, decimals: 2, min: 0, max: null },
  { tag: "BF2-TT-201", description: "bag filter inlet gas temperature", unit: "°C", sensorTauS: 15, noiseSigma: 0.15, decimals: 2, min: null, max: null },
  { tag: "BF2-TT-211", description: "bag filter outlet gas temperature", unit: "°C", sensorTauS: 15, noiseSigma: 0.15, decimals: 2, min: null, max: null },
  { tag: "BF2-PT-212", description: "bag filter outlet gauge pressure", unit: "mbar", sensorTauS: 3, noiseSigma: 0.15, decimals: 2, min: null, max: null },
  { tag: "BF2-AT-213", description: "bag filter outlet O2, extractive with gas cooler, dry basis", unit: "% vol", sensorTauS: 45, noiseSigma: 0.04, decimals: 2, min: 0, max: 25 },
  { tag: "BF2-AT-214", description: "bag filter outlet CO", unit: "ppm", sensorTauS: 40, noiseSigma: 0.4, decimals: 1, min: 0, max: null },
  { tag: "BF2-AT-215", description: "bag filter outlet H2O (wet basis)", unit: "% vol", sensorTauS: 45, noiseSigma: 0.08, decimals: 2, min: 0, max: 100 },
  { tag: "FS2-TT-311", description: "fine-coal silo temperature", unit: "°C", sensorTauS: 60, noiseSigma: 0.1, decimals: 2, min: null, max: null },
  { tag: "FS2-AT-313", description: "fine-coal silo O2 (dry)", unit: "% vol", sensorTauS: 60, noiseSigma: 0.04, decimals: 2, min: 0, max: 25 },
  { tag: "FS2-AT-314", description: "fine-coal silo CO", unit: "ppm", sensorTauS: 60, noiseSigma: 0.4, decimals: 1, min: 0, max: null },
  { tag: "IG2-FT-051", description: "inert gas (N2) flow into the loop", unit: "Nm³/h", sensorTauS: 5, noiseSigma: 15, decimals: 0, min: 0, max: null },
];

/**
 * Discrete status outputs (0 or 1), published after the measured tags in every frame. They
 * carry no noise and draw no deviate, so the measured tags' noise is the same with or without them.
 */
export const STATUS_TAGS: readonly { tag: string; description: string; unit: string }[] = [
  { tag: "VM2-UZ-130", description: "mill trip from the protection system (1 = tripped)", unit: "state" },
  { tag: "BF2-AS-213", description: "bag filter O2/CO analyser status (1 = function check: calibration, blowback)", unit: "state" },
];

/** True process values (before sensor lag and noise), one per tag, in TAG_SPECS order. */
export type TrueValues = Record<string, number>;

/**
 * The plant state. Construct at cold standstill; `settleGrinding()` for a plant that has
 * been grinding for hours. `step()` advances by dtS with the given commands.
 */
export class PlantModel {
  // Fan, feed, drive, burner, inerting.
  millFlowNm3PerH = 0;
  feedTPerH = 0;
  /** Grinding bed and recirculating load, as a fraction of the nominal-feed bed. */
  bedFrac = 0;
  drivePowerKw = 0;
  evaporationTPerH = 0;
  /** Mill outlet set point in force (tracks the outlet while the burner is off). */
  setpointEffC = AMBIENT_TEMP_C;
  firingKw = 0;
  n2Nm3PerH = 0;
  n2Purging = false;
  millOutletMbar = 0;
  filterOutletMbar = 0;
  // Loop gas composition (wet mole fractions; CO in ppm of the wet gas).
  o2Frac = AIR_O2_FRAC_WET;
  h2oFrac = AMBIENT_H2O_FRAC;
  coPpmWet = FALSE_AIR_CO_PPM;
  coalOxidationCoNm3PerH = 0;
  // Temperatures.
  hggOutletC = AMBIENT_TEMP_C;
  millInletC = AMBIENT_TEMP_C;
  millSteelC = AMBIENT_TEMP_C;
  millMassiveC = AMBIENT_TEMP_C;
  millOutletC = AMBIENT_TEMP_C;
  filterInletC = AMBIENT_TEMP_C;
  filterSteelC = AMBIENT_TEMP_C;
  filterOutletC = AMBIENT_TEMP_C;
  // Fine-coal silo (empty and air-filled at cold standstill).
  siloC = AMBIENT_TEMP_C;
  siloO2DryPct = O2_DRY_AIR_PCT;
  siloCoPpm = FALSE_AIR_CO_PPM;
  /** Scenario extras as applied in the last step. */
  filterCoExtraPpm = 0;
  filterExtraK = 0;
  damperAirNm3PerH = 0;
  rawCoalMoisture = RAW_COAL_MOISTURE;
  millCoExtraNm3PerH = 0;
  tripped = false;
  bf2AnalyserInCheck = false;
  bf2AnalyserCheckGas: CheckGas | null = null;
  /** Sensor readings (lagged true values), keyed by tag. */
  readonly sensors = new Map<string, number>();

  constructor() {
    const truth = this.trueValues();
    for (const spec of TAG_SPECS) this.sensors.set(spec.tag, truth[spec.tag] ?? 0);
  }

  /** Bring the plant to steady grinding by running it (without noise) for many hours. */
  settleGrinding(): void {
    // Start from a warm guess so the settling run stays short and inside the plant's envelope.
    this.millFlowNm3PerH = MILL_FLOW_GRINDING_NM3_PER_H;
    this.feedTPerH = NOMINAL_FEED_T_PER_H;
    this.bedFrac = 1;
    this.setpointEffC = GRINDING_COMMANDS.millOutletSpC;
    this.millSteelC = this.millMassiveC = this.millOutletC = this.millInletC = 88;
    this.filterSteelC = this.filterInletC = this.filterOutletC = 82;
    this.hggOutletC = 500;
    this.o2Frac = 0.09;
    this.h2oFrac = 0.14;
    this.siloC = 70;
    for (let i = 0; i < 6 * 360; i++) this.step(10, GRINDING_COMMANDS);
  }

  /** Fresh flows entering the loop for the present state, Nm³/h. */
  freshFlows(): { flue: number; falseAir: number; n2: number; steam: number; damperAir: number } {
    const fuelNm3PerH = ((this.firingKw / HGG_EFFICIENCY) * 3.6) / FUEL_LHV_MJ_PER_NM3;
    const suctionMbar = Math.max(0, -this.filterOutletMbar);
    return {
      flue: fuelNm3PerH * FLUE_NM3_PER_NM3_FUEL,
      falseAir: (FALSE_AIR_GRINDING_NM3_PER_H * suctionMbar) / -FILTER_OUTLET_GRINDING_MBAR,
      n2: this.n2Nm3PerH,
      steam: steamNm3PerH(this.evaporationTPerH),
      damperAir: this.damperAirNm3PerH,
    };
  }

  step(dtS: number, cmd: PlantCommands): void {
    if (!(dtS > 0) || !Number.isFinite(dtS)) throw new Error(`plant step: expected a positive finite step in seconds, found ${dtS}`);
    const fansOn = cmd.fansOn;
    const lit = cmd.hggLit && fansOn; // burner interlock: no firing without draught
    const driveOn = cmd.driveOn && fansOn;

    // Fan, feeder, bed, drive.
    const flowTarget = !fansOn ? 0 : driveOn || cmd.trip ? MILL_FLOW_GRINDING_NM3_PER_H : MILL_FLOW_WARMUP_NM3_PER_H;
    this.millFlowNm3PerH = lag(this.millFlowNm3PerH, flowTarget, dtS, fansOn ? 30 : 20);
    if (cmd.trip) {
      // Tripped: drive and feeder stop at once; the bed stays where it lies (coal left inside).
      this.feedTPerH = 0;
      this.drivePowerKw = 0;
    } else {
      this.feedTPerH = lag(this.feedTPerH, driveOn ? Math.max(0, cmd.feedSpTPerH) : 0, dtS, 10);
      this.bedFrac = lag(this.bedFrac, this.feedTPerH / NOMINAL_FEED_T_PER_H, dtS, 90);
      this.drivePowerKw = lag(this.drivePowerKw, driveOn ? DRIVE_IDLE_KW + DRIVE_GRINDING_KW * this.bedFrac : 0, dtS, 5);
    }
    this.rawCoalMoisture = cmd.rawCoalMoisture;
    this.evaporationTPerH = lag(this.evaporationTPerH, evaporationTPerH(this.feedTPerH, cmd.rawCoalMoisture, PRODUCT_COAL_MOISTURE), dtS, 60);
    this.damperAirNm3PerH = fansOn ? Math.max(0, cmd.damperAirNm3PerH) : 0; // no suction, no inflow

    // Draught: the fan holds about -3 mbar before the mill [CP]; losses scale with flow squared.
    const flowFrac = this.millFlowNm3PerH / MILL_FLOW_GRINDING_NM3_PER_H;
    const millInletMbar = -3 * Math.min(1, this.millFlowNm3PerH / MILL_FLOW_WARMUP_NM3_PER_H);
    // The bed's pressure drop needs gas through it; a bed left after a trip drops it only with flow.
    const bedDpMbar = cmd.trip ? 10 * this.bedFrac * Math.min(1, flowFrac * flowFrac) : 10 * this.bedFrac;
    const millOutletTarget = millInletMbar - 7 * flowFrac * flowFrac - bedDpMbar;
    this.millOutletMbar = lag(this.millOutletMbar, millOutletTarget, dtS, 5);
    this.filterOutletMbar = lag(this.filterOutletMbar, millOutletTarget - 15 * flowFrac * flowFrac, dtS, 5);

    const w = (this.millFlowNm3PerH * CP_GAS_KJ_PER_NM3K) / 3600; // kW/K
    const mixBeforeHeat = (): number => {
      if (this.millFlowNm3PerH <= 1) return this.filterOutletC;
      const f = this.freshFlows();
      const cold = Math.min(this.millFlowNm3PerH, f.flue + f.falseAir + f.n2 + f.damperAir);
      return ((this.millFlowNm3PerH - cold) * this.filterOutletC + cold * AMBIENT_TEMP_C) / this.millFlowNm3PerH;
    };
    // Heat taken from the gas in the mill: evaporation (latent plus superheat of the
    // vapour, from liquid at ambient [M: steam table approximations]), coal heating,
    // minus grinding heat.
    const millSinkKw =
      (this.evaporationTPerH / 3.6) * (2501 + 1.87 * this.millOutletC - 4.19 * AMBIENT_TEMP_C) +
      (this.feedTPerH / 3.6) * CP_COAL_KJ_PER_KGK * (this.millOutletC - AMBIENT_TEMP_C) -
      GRINDING_HEAT_SHARE * this.drivePowerKw;

    // Mill outlet temperature controller acting on the burner: it inverts the mill's
    // static heat balance for the present steel temperature (no integrator to wind up).
    this.setpointEffC = lit ? cmd.millOutletSpC : this.millOutletC;
    let firingTarget = 0;
    if (lit && w > 1) {
      const inletReqC =
        ((w + MILL_GAS_STEEL_KW_PER_K + MILL_GAS_MASSIVE_KW_PER_K) * this.setpointEffC -
          MILL_GAS_STEEL_KW_PER_K * this.millSteelC -
          MILL_GAS_MASSIVE_KW_PER_K * this.millMassiveC +
          millSinkKw) /
        w;
      const maxKw = driveOn ? HGG_MAX_GRINDING_KW : HGG_MAX_WARMUP_KW;
      firingTarget = Math.max(HGG_MIN_FIRE_KW, Math.min(maxKw, w * (inletReqC - mixBeforeHeat())));
    }
    // Burner load rises at a limited rate (refractory, flame stability) and falls with the
    // burner's own lag; a trip or shut-down takes the flame out within seconds.
    if (!lit) this.firingKw = lag(this.firingKw, 0, dtS, 5);
    else if (firingTarget > this.firingKw) this.firingKw = Math.min(firingTarget, this.firingKw + BURNER_RAMP_KW_PER_S * dtS);
    else this.firingKw = lag(this.firingKw, firingTarget, dtS, BURNER_TAU_S);

    // Inerting controller: N2 for the set point at the present fresh flows, plus a purge
    // flow while the loop is still well above the set point (hysteresis band).
    let n2Target = 0;
    if (fansOn && cmd.o2SpPctWet > 0) {
      const o2Pct = this.o2Frac * 100;
      if (o2Pct > cmd.o2SpPctWet + N2_PURGE_ON_BAND_PCT) this.n2Purging = true;
      else if (o2Pct < cmd.o2SpPctWet + N2_PURGE_OFF_BAND_PCT) this.n2Purging = false;
      const f = this.freshFlows();
      const o2InNm3PerH = f.flue * FLUE_O2_FRAC + f.falseAir * AIR_O2_FRAC_WET;
      const n2ForSetpoint = o2InNm3PerH / (cmd.o2SpPctWet / 100) - (f.flue + f.falseAir + f.steam);
      n2Target = Math.min(N2_MAX_NM3_PER_H, Math.max(0, n2ForSetpoint, this.n2Purging ? cmd.n2PurgeNm3PerH : 0));
    } else {
      this.n2Purging = false;
    }
    if (cmd.n2ManualNm3PerH !== null) n2Target = Math.min(N2_MAX_NM3_PER_H, Math.max(0, cmd.n2ManualNm3PerH));
    this.n2Nm3PerH = lag(this.n2Nm3PerH, n2Target, dtS, N2_TAU_S);

    // Loop composition: well-mixed volume, exact update for constant inflows.
    this.millCoExtraNm3PerH = Math.max(0, cmd.millCoExtraNm3PerH);
    this.coalOxidationCoNm3PerH = lag(this.coalOxidationCoNm3PerH, COAL_OXIDATION_CO_NM3_PER_T * this.feedTPerH, dtS, COAL_OXIDATION_TAU_S);
    const f = this.freshFlows();
    // Air from the stuck damper mixes like false air; a manual purge with the fans stopped
    // partly short-circuits to the vent (PURGE_SHORT_CIRCUIT_SHARE).
    const air = f.damperAir > 0 ? f.falseAir + f.damperAir : f.falseAir;
    const n2Mixed = !fansOn && cmd.n2ManualNm3PerH !== null ? f.n2 * (1 - PURGE_SHORT_CIRCUIT_SHARE) : f.n2;
    const totalNm3PerH = f.flue + air + n2Mixed + f.steam;
    if (totalNm3PerH > 1e-6) {
      const tauS = (LOOP_VOLUME_NM3 * 3600) / totalNm3PerH;
      const o2Eq = (f.flue * FLUE_O2_FRAC + air * AIR_O2_FRAC_WET) / totalNm3PerH;
      const h2oEq = (f.flue * FLUE_H2O_FRAC + air * AMBIENT_H2O_FRAC + f.steam) / totalNm3PerH;
      const coEq = (f.flue * FLUE_CO_PPM + air * FALSE_AIR_CO_PPM + (this.coalOxidationCoNm3PerH + this.millCoExtraNm3PerH) * 1e6) / totalNm3PerH;
      this.o2Frac = lag(this.o2Frac, o2Eq, dtS, tauS);
      this.h2oFrac = lag(this.h2oFrac, h2oEq, dtS, tauS);
      this.coPpmWet = lag(this.coPpmWet, coEq, dtS, tauS);
    } else {
      // Nothing flows in or out (fans stopped, no N2): the CO made inside accumulates.
      this.coPpmWet += ((this.coalOxidationCoNm3PerH + this.millCoExtraNm3PerH) * 1e6 * dtS) / (LOOP_VOLUME_NM3 * 3600);
    }

    // Temperatures. Each steel node: gas out = (W·T_in − S + UA·T_steel)/(W + UA); the steel
    // then lags toward its own balance (tau = C/(a + U_wall), a = UA·W/(W + UA)).
    const wNow = (this.millFlowNm3PerH * CP_GAS_KJ_PER_NM3K) / 3600;
    const inletTarget = wNow > 1 ? mixBeforeHeat() + this.firingKw / wNow : this.millSteelC;
    this.millInletC = lag(this.millInletC, inletTarget, dtS, 20);
    const sinkKw = wNow > 1 ? millSinkKw : 0;
    // The massive parts enter the gas balance with their present temperature: the gas sees
    // them as a conductance to a fixed temperature within one step; they then lag toward
    // the gas. Both updates are convex combinations, so the pair stays bounded for any step.
    const wMassive = MILL_GAS_MASSIVE_KW_PER_K;
    this.millSteelC = steelStep(
      this.millSteelC,
      (wNow * this.millInletC + wMassive * this.millMassiveC) / (wNow + wMassive),
      sinkKw,
      wNow + wMassive,
      MILL_GAS_STEEL_KW_PER_K,
      MILL_WALL_LOSS_KW_PER_K,
      MILL_STEEL_KJ_PER_K,
      dtS,
    );
    this.millOutletC =
      (wNow * this.millInletC - sinkKw + MILL_GAS_STEEL_KW_PER_K * this.millSteelC + wMassive * this.millMassiveC) /
      (wNow + MILL_GAS_STEEL_KW_PER_K + wMassive);
    this.millMassiveC = lag(this.millMassiveC, this.millOutletC, dtS, MILL_MASSIVE_KJ_PER_K / MILL_GAS_MASSIVE_KW_PER_K);
    const ductInC = this.millOutletC - (DUCT_LOSS_KW_PER_K * (this.millOutletC - AMBIENT_TEMP_C)) / (wNow + DUCT_LOSS_KW_PER_K);
    this.filterInletC = wNow > 1 ? ductInC : lag(this.filterInletC, this.filterSteelC, dtS, 600);
    this.filterSteelC = steelStep(this.filterSteelC, this.filterInletC, 0, wNow, FILTER_GAS_STEEL_KW_PER_K, FILTER_WALL_LOSS_KW_PER_K, FILTER_STEEL_KJ_PER_K, dtS);
    this.filterExtraK = cmd.filterExtraK;
    this.filterCoExtraPpm = cmd.filterCoExtraPpm;
    this.tripped = cmd.trip;
    this.bf2AnalyserInCheck = cmd.bf2AnalyserInCheck;
    this.bf2AnalyserCheckGas = cmd.bf2AnalyserCheckGas;
    this.filterOutletC =
      (wNow * this.filterInletC + FILTER_GAS_STEEL_KW_PER_K * this.filterSteelC) / (wNow + FILTER_GAS_STEEL_KW_PER_K) + cmd.filterExtraK;

    // Hot-gas generator outlet: flue gas plus the tempering share of the recirculated gas.
    const recircNm3PerH = Math.max(0, this.millFlowNm3PerH - f.flue - air - f.n2);
    const hggFlowNm3PerH = f.flue + HGG_TEMPERING_SHARE * recircNm3PerH;
    if (hggFlowNm3PerH > 1) {
      const hggInC = (f.flue * AMBIENT_TEMP_C + HGG_TEMPERING_SHARE * recircNm3PerH * this.filterOutletC) / hggFlowNm3PerH;
      const target = hggInC + this.firingKw / ((hggFlowNm3PerH * CP_GAS_KJ_PER_NM3K) / 3600);
      this.hggOutletC = lag(this.hggOutletC, target, dtS, 90);
    } else {
      this.hggOutletC = lag(this.hggOutletC, AMBIENT_TEMP_C, dtS, 3 * 3600); // refractory cools slowly
    }

    // Fine-coal silo: filled with product and its carrier gas while grinding; sealed otherwise.
    if (this.feedTPerH > 1) {
      this.siloC = lag(this.siloC, this.filterOutletC - 12, dtS, 40 * 60);
      this.siloO2DryPct = lag(this.siloO2DryPct, (100 * this.o2Frac) / (1 - this.h2oFrac), dtS, 30 * 60);
      this.siloCoPpm = lag(this.siloCoPpm, (0.7 * this.coPpmWet) / (1 - this.h2oFrac) + 4, dtS, 30 * 60);
    } else if (!fansOn) {
      this.siloC = lag(this.siloC, AMBIENT_TEMP_C, dtS, 24 * 3600);
    }

    // Sensors.
    const truth = this.trueValues();
    for (const spec of TAG_SPECS) {
      const prev = this.sensors.get(spec.tag) ?? 0;
      this.sensors.set(spec.tag, lag(prev, truth[spec.tag] ?? 0, dtS, spec.sensorTauS));
    }
  }

  /**
   * True process values at the measuring points. CO analysers are extractive (dry basis). The
   * bag filter analyser's cell sees its check gas instead while one is applied.
   */
  trueValues(): TrueValues {
    const dry = 1 - this.h2oFrac;
    const check = this.bf2AnalyserCheckGas;
    return {
      "HG2-TT-011": this.hggOutletC,
      "VM2-TT-101": this.millInletC,
      "VM2-TT-111": this.millOutletC,
      "VM2-PT-112": this.millOutletMbar,
      "VM2-AT-113": 100 * this.o2Frac,
      "VM2-AT-114": this.coPpmWet / dry,
      "VM2-JI-120": this.drivePowerKw,
      "VM2-WI-121": this.feedTPerH,
      "BF2-TT-201": this.filterInletC,
      "BF2-TT-211": this.filterOutletC,
      "BF2-PT-212": this.filterOutletMbar,
      "BF2-AT-213": check ? check.o2PctDry : (100 * this.o2Frac) / dry,
      "BF2-AT-214": check ? check.coPpm : (this.coPpmWet + FILTER_CO_OFFSET_PPM * Math.min(1, this.bedFrac)) / dry + this.filterCoExtraPpm,
      "BF2-AT-215": 100 * this.h2oFrac,
      "FS2-TT-311": this.siloC,
      "FS2-AT-313": this.siloO2DryPct,
      "FS2-AT-314": this.siloCoPpm,
      "IG2-FT-051": this.n2Nm3PerH,
    };
  }

  /** Sensor readings with noise, rounded as the instruments report them, then the status outputs. */
  measure(normal: () => number): { tag: string; value: number }[] {
    const measured = TAG_SPECS.map((spec) => {
      // One deviate per tag and frame, always, so the noise sequence never shifts.
      const noise = normal() * spec.noiseSigma;
      const reading = this.sensors.get(spec.tag) ?? 0;
      let value = reading + noise;
      // Stopped machines report exact zeros: drive off, feeder off, N2 below the meter's low-flow cut-off.
      if (spec.tag === "VM2-JI-120" && reading < 1) value = 0;
      if (spec.tag === "VM2-WI-121" && reading < 0.05) value = 0;
      if (spec.tag === "IG2-FT-051" && reading < 50) value = 0;
      if (spec.min !== null) value = Math.max(spec.min, value);
      if (spec.max !== null) value = Math.min(spec.max, value);
      const scale = 10 ** spec.decimals;
      return { tag: spec.tag, value: Math.round(value * scale) / scale + 0 };
    });
    const status: Record<string, boolean> = { "VM2-UZ-130": this.tripped, "BF2-AS-213": this.bf2AnalyserInCheck };
    return [...measured, ...STATUS_TAGS.map((t) => ({ tag: t.tag, value: status[t.tag] ? 1 : 0 }))];
  }
}

function steelStep(steelC: number, gasInC: number, sinkKw: number, wKwPerK: number, uaKwPerK: number, wallKwPerK: number, heatCapKjPerK: number, dtS: number): number {
  const a = (uaKwPerK * wKwPerK) / (wKwPerK + uaKwPerK);
  // a·T_target, written without dividing by W so that W = 0 (standstill) is fine.
  const aTarget = (uaKwPerK * (wKwPerK * gasInC - sinkKw)) / (wKwPerK + uaKwPerK);
  const target = (aTarget + wallKwPerK * AMBIENT_TEMP_C) / (a + wallKwPerK);
  return lag(steelC, target, dtS, heatCapKjPerK / (a + wallKwPerK));
}
