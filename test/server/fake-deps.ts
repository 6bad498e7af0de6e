// An in-memory AppDeps for the server tests and for looking at the dashboard without
// the daemon. Invented plant: Tarnholm Works, coal grinding line 2. The figures are
// plausible for such a line but invented; nothing here is a reference value.
import { fileURLToPath } from "node:url";
import { ADVISORY_ONLY, type AdvisoryTransition, type AdvisoryView, type LiveMessage, type PlantState } from "../../src/core/types.js";
import { UnknownSeriesError, type AckResult, type AppDeps, type HealthView, type TrendPoint } from "../../src/server/deps.js";

export const DASHBOARD_DIR = fileURLToPath(new URL("../../dashboard/", import.meta.url));

/** 2024-11-14 05:42:10 UTC: the fake plant's "now". */
export const FAKE_NOW_MS = Date.UTC(2024, 10, 14, 5, 42, 10);
const MIN = 60_000;

function advisory(partial: Partial<AdvisoryView> & Pick<AdvisoryView, "id" | "tier" | "title" | "quantity">): AdvisoryView {
  return {
    ruleId: partial.id,
    state: "unack",
    unitId: null,
    message: `${partial.title}. This is an advisory only; the plant's protection system governs.`,
    value: null,
    unit: "",
    limit: 0,
    direction: "high",
    cause: "invented for tests",
    consequence: "invented for tests",
    check: "invented for tests",
    origin: "common practice",
    raisedAtMs: FAKE_NOW_MS - MIN,
    lastChangeMs: FAKE_NOW_MS - MIN,
    ackedBy: null,
    ackedAtMs: null,
    ...partial,
  };
}

type CoPointView = PlantState["coPoints"][number];

/** A CO point view from its headline figures; the window and baseline details follow from them. */
type FakeDewPoint = PlantState["dewPoints"][number];
function fakeDewPoint(
  p: Pick<FakeDewPoint, "id" | "name" | "unitId" | "gasTempC" | "h2oPctVol" | "absPressurePa" | "dewPointC" | "marginK" | "status" | "reason"> & Partial<FakeDewPoint>,
): FakeDewPoint {
  const trendWhy = p.marginK === null ? `margin unknown: ${p.reason}` : "margin not shrinking (0.010 K/min)";
  return {
    moistureSourceId: "bf2-h2o",
    moistureSourceName: "Filter outlet H2O analyser",
    moistureSourceKind: "analyser",
    gaugePressurePa: p.absPressurePa === null ? null : p.absPressurePa - 101_200,
    dewPointReason: p.dewPointC === null ? p.reason : "",
    comparisons: [],
    h2oDisagreementPctVol: null,
    dewPointDisagreementK: null,
    disagreementReason: "no other moisture source to compare with",
    marginTrendKPerMin: p.marginK === null ? null : 0.01,
    trendWindowS: 600,
    trendReason: p.marginK === null ? trendWhy : "least squares over 600 s (window 600 s, 601 points)",
    timeToCondensationS: null,
    timeToCondensationReason: trendWhy,
    ...p,
  };
}

type FakeMoistureSource = PlantState["moistureSources"][number];
function fakeMoistureSource(p: Pick<FakeMoistureSource, "id" | "name" | "kind" | "h2oPctVol" | "status" | "reason"> & Partial<FakeMoistureSource>): FakeMoistureSource {
  return {
    relativeHumidityPct: null,
    sensorTempC: null,
    sensorAbsPressurePa: null,
    coalFeedTPerH: null,
    rawMoisturePctMass: null,
    productMoisturePctMass: null,
    evaporatedWaterKgPerH: null,
    gasFlowNm3PerH: null,
    gasFlowMeasuredAt: null,
    incomingH2oPctVol: null,
    ...p,
  };
}

function coPoint(p: Pick<CoPointView, "id" | "name" | "unitId" | "signal" | "coPpm" | "gradientPpmPerMin" | "windowS" | "status" | "reason">): CoPointView {
  const window = (windowS: number) => ({
    windowS,
    robustPpmPerMin: p.gradientPpmPerMin,
    robustAsOfMs: p.status === "ok" ? FAKE_NOW_MS - 1000 : null,
    lsPpmPerMin: p.gradientPpmPerMin,
    points: p.status === "ok" ? windowS : 0,
    spanS: p.status === "ok" ? windowS : 0,
    status: p.status,
    reason: p.reason,
  });
  const baselinePpm = p.coPpm === null ? null : 40;
  return {
    ...p,
    gradientLsPpmPerMin: p.gradientPpmPerMin,
    gradientLongPpmPerMin: p.gradientPpmPerMin,
    transportLagS: 60,
    short: window(p.windowS),
    long: window(p.windowS * 3),
    baseline: {
      ppm: baselinePpm,
      status: baselinePpm === null ? "unknown" : "ok",
      reason: baselinePpm === null ? p.reason : "median of 61 values over 3600 s",
      frozen: null,
      phase: null,
      phaseNote: "no operating phase computed for the unit: the baseline is not frozen by phase",
      values: 61,
      windowS: 3600,
      riseAbovePpm: p.coPpm === null || baselinePpm === null ? null : p.coPpm - baselinePpm,
      riseReason: "",
    },
    store: null,
    lastRestart: { atMs: null, reason: "no data yet" },
    samples: { accepted: 3600, duplicates: 0, outOfOrder: 0 },
  };
}

export function fakePlantState(nowMs = FAKE_NOW_MS): PlantState {
  const sig = (id: string, name: string, unit: string, value: number | null, extra: Partial<PlantState["signals"][number]> = {}) => ({
    id,
    name,
    unit,
    value,
    quality: "good" as const,
    qualityReason: null,
    sourceTimeMs: nowMs - 1000,
    receiveTimeMs: nowMs - 800,
    expectedPeriodS: 5,
    stale: false,
    functionCheck: false,
    ...extra,
  });
  return {
    advisoryOnly: ADVISORY_ONLY,
    site: { name: "Tarnholm Works", plant: "Coal grinding line 2" },
    nowMs,
    signals: [
      sig("vm2-o2", "VM2 outlet O2 (VM2-AT-131)", "% vol", 7.9),
      sig("bf2-o2", "BF2 outlet O2 (BF2-AT-231)", "% vol", 9.1),
      sig("s21-o2", "S21 silo O2 (S21-AT-311)", "% vol", 6.2, {
        stale: true,
        sourceTimeMs: nowMs - 12 * MIN - 500,
        receiveTimeMs: nowMs - 12 * MIN,
      }),
      sig("vm2-co", "VM2 outlet CO (VM2-AT-132)", "ppm", 62),
      sig("bf2-co", "BF2 outlet CO (BF2-AT-232)", "ppm", 148),
      sig("s21-co", "S21 silo CO (S21-AT-312)", "ppm", 35, { functionCheck: true, quality: "uncertain", qualityReason: "calibration" }),
      sig("vm2-tt-111", "VM2 outlet temperature (VM2-TT-111)", "°C", 92.4),
      sig("bf2-tt-211", "BF2 outlet temperature (BF2-TT-211)", "°C", 71.5),
      sig("vm2-h2o", "VM2 outlet H2O (VM2-AT-133)", "% vol", 14.8),
    ],
    units: [
      {
        id: "vm2",
        name: "Mill VM2",
        kind: "mill",
        inerting: {
          unitId: "vm2",
          state: "inert",
          o2Signal: "vm2-o2",
          o2PctVol: 7.9,
          basis: "wet",
          limitPctVol: 10,
          limitSource: "site maximum 10 % wet (explosion protection document)",
          marginPctPt: 2.1,
          marginalBandPctPt: 1.5,
          reason: "O2 below the limit by more than the marginal band",
          measuredState: "inert",
          o2Signals: ["vm2-o2"],
          readingPctVol: 7.9,
          readingBasis: "wet",
          h2oSignal: null,
          h2oPctVol: null,
          limits: [
            { id: "site-maximum", pctVol: 10, basis: "wet", text: "site maximum 10 % wet (explosion protection document)", origin: "explosion protection document", locPctVol: null, monitoring: null, temperatureAllowancePctPt: null, o2PctVol: 7.9, marginPctPt: 2.1, trendPctPtPerMin: 0.02, timeToLimitS: 6300, governing: true },
          ],
          readings: [{ id: "vm2-o2", pctVol: 7.9, trusted: true, used: true, reason: "" }],
          vote: null,
          trendPctPtPerMin: 0.02,
          trendWindowS: 300,
          timeToLimitS: 6300,
          trendReason: "least squares over 300 s (300 points)",
          purge: null,
        },
      },
      {
        id: "bf2",
        name: "Bag filter BF2",
        kind: "bag-filter",
        inerting: {
          unitId: "bf2",
          state: "marginal",
          o2Signal: "bf2-o2",
          o2PctVol: 9.1,
          basis: "dry",
          limitPctVol: 10,
          limitSource: "LOC 12 % dry with the 2-point margin",
          marginPctPt: 0.9,
          marginalBandPctPt: 1.5,
          reason: "O2 within 1.5 points of the limit",
          measuredState: "marginal",
          o2Signals: ["bf2-o2"],
          readingPctVol: 9.1,
          readingBasis: "dry",
          h2oSignal: null,
          h2oPctVol: null,
          limits: [
            { id: "loc", pctVol: 10, basis: "dry", text: "LOC 12 % dry with the 2-point margin", origin: "coal test report", locPctVol: 12, monitoring: "continuous", temperatureAllowancePctPt: null, o2PctVol: 9.1, marginPctPt: 0.9, trendPctPtPerMin: -0.05, timeToLimitS: null, governing: true },
          ],
          readings: [{ id: "bf2-o2", pctVol: 9.1, trusted: true, used: true, reason: "" }],
          vote: null,
          trendPctPtPerMin: -0.05,
          trendWindowS: 300,
          timeToLimitS: null,
          trendReason: "O2 not rising toward a limit",
          purge: null,
        },
      },
      {
        id: "s21",
        name: "Fine-coal silo S21",
        kind: "silo",
        inerting: {
          unitId: "s21",
          state: "unknown",
          o2Signal: "s21-o2",
          o2PctVol: null,
          basis: "dry",
          limitPctVol: 8,
          limitSource: "site maximum 8 % dry",
          marginPctPt: null,
          marginalBandPctPt: 1,
          reason: "O2 analyser S21-AT-311 stale: no update for 12 min",
          measuredState: "unknown",
          o2Signals: ["s21-o2"],
          readingPctVol: null,
          readingBasis: "dry",
          h2oSignal: null,
          h2oPctVol: null,
          limits: [
            { id: "site-maximum", pctVol: 8, basis: "dry", text: "site maximum 8 % dry", origin: "explosion protection document", locPctVol: null, monitoring: null, temperatureAllowancePctPt: null, o2PctVol: null, marginPctPt: null, trendPctPtPerMin: null, timeToLimitS: null, governing: true },
          ],
          readings: [{ id: "s21-o2", pctVol: null, trusted: false, used: false, reason: "s21-o2: no data for 720 s" }],
          vote: null,
          trendPctPtPerMin: null,
          trendWindowS: 300,
          timeToLimitS: null,
          trendReason: "O2 trend unknown: s21-o2: no data for 720 s",
          purge: null,
        },
      },
      { id: "hg2", name: "Hot-gas generator HG2", kind: "hot-gas-generator", inerting: null },
    ],
    moistureSources: [
      fakeMoistureSource({ id: "bf2-h2o", name: "Filter outlet H2O analyser", kind: "analyser", h2oPctVol: 14.5, status: "ok", reason: "H2O analyser bf2-h2o" }),
      fakeMoistureSource({
        id: "vm2-balance",
        name: "Mill moisture balance",
        kind: "mass-balance",
        h2oPctVol: 13.6,
        status: "ok",
        reason: "mass balance: 3.52 t/h of water from 33.0 t/h of coal (12.0 % -> 1.5 %) into 70000 Nm³/h (mill-inlet) at 9.0 % H2O",
        coalFeedTPerH: 33,
        rawMoisturePctMass: 12,
        productMoisturePctMass: 1.5,
        evaporatedWaterKgPerH: 3518,
        gasFlowNm3PerH: 70_000,
        gasFlowMeasuredAt: "mill-inlet",
        incomingH2oPctVol: 9,
      }),
    ],
    dewPoints: [
      fakeDewPoint({ id: "vm2-outlet", name: "Mill outlet", unitId: "vm2", gasTempC: 92.4, h2oPctVol: 14.8, absPressurePa: 100_950, dewPointC: 53.9, marginK: 38.5, status: "ok", reason: "" }),
      fakeDewPoint({ id: "bf2-inlet", name: "Filter inlet", unitId: "bf2", gasTempC: 84, h2oPctVol: 14.6, absPressurePa: 100_700, dewPointC: 53.6, marginK: 30.4, status: "ok", reason: "" }),
      fakeDewPoint({
        id: "bf2-outlet",
        name: "Filter outlet",
        unitId: "bf2",
        gasTempC: 71.5,
        h2oPctVol: 14.5,
        absPressurePa: 100_400,
        dewPointC: 53.4,
        marginK: 18.1,
        status: "ok",
        reason: "",
        marginTrendKPerMin: -0.12,
        timeToCondensationS: 9050,
        comparisons: [
          { id: "vm2-balance", name: "Mill moisture balance", kind: "mass-balance", h2oPctVol: 13.6, dewPointC: 52.2, h2oDifferencePctVol: -0.9, dewPointDifferenceK: -1.2, status: "ok", reason: "" },
        ],
        h2oDisagreementPctVol: 0.9,
        dewPointDisagreementK: 1.2,
        disagreementReason: "",
      }),
      fakeDewPoint({
        id: "bf2-hopper",
        name: "Dust hopper",
        unitId: "bf2",
        gasTempC: null,
        h2oPctVol: 14.5,
        absPressurePa: 100_400,
        dewPointC: 53.4,
        marginK: null,
        status: "unknown",
        reason: "gas temperature BF2-TT-215 bad: open circuit",
      }),
    ],
    dewPointSummary: [
      {
        id: "plant",
        status: "partial",
        reason: "unknown at bf2-hopper: gas temperature BF2-TT-215 bad: open circuit; the lowest known is 18.1 K at bf2-outlet",
        lowestMarginK: 18.1,
        locationId: "bf2-outlet",
        locationName: "Filter outlet",
        lowestMarginTrendKPerMin: -0.12,
        shortestTimeToCondensationS: 9050,
        shortestTimeLocationId: "bf2-outlet",
        knownLocations: 3,
        totalLocations: 4,
        unknownLocations: [{ id: "bf2-hopper", reason: "gas temperature BF2-TT-215 bad: open circuit" }],
        barometricPa: 101_200,
        barometricSource: "configured",
        barometricReason: "configured 1012.0 hPa",
        lowestAcidMarginK: null,
        acidLocationId: null,
      },
    ],
    acidDewPoints: [],
    coPoints: [
      coPoint({ id: "vm2-outlet", name: "Mill outlet", unitId: "vm2", signal: "vm2-co", coPpm: 62, gradientPpmPerMin: 0.4, windowS: 300, status: "ok", reason: "" }),
      coPoint({ id: "bf2-outlet", name: "Filter outlet", unitId: "bf2", signal: "bf2-co", coPpm: 148, gradientPpmPerMin: 6.8, windowS: 300, status: "ok", reason: "" }),
      coPoint({
        id: "s21-top",
        name: "Silo S21 top",
        unitId: "s21",
        signal: "s21-co",
        coPpm: null,
        gradientPpmPerMin: null,
        windowS: 3600,
        status: "unknown",
        reason: "analyser S21-AT-312 in function check (calibration)",
      }),
    ],
    coRises: [
      {
        id: "bf2",
        name: "Filter CO rise",
        unitId: "bf2",
        inlet: "vm2-outlet",
        outlet: "bf2-outlet",
        transportDelayS: 20,
        outletPpm: 148,
        inletPpm: 62,
        inletAtMs: nowMs - 21_000,
        inletHow: "interpolated",
        risePpm: 86,
        status: "ok",
        reason: "",
        historyPoints: 80,
      },
    ],
    phases: [
      {
        id: "vm2",
        unitId: "vm2",
        phase: "grinding",
        sinceMs: nowMs - 185 * MIN,
        reason: "drive running (1795 kW >= 100 kW) and feed on (29.8 t/h >= 3 t/h)",
        inputs: {
          drivePowerKW: 1795,
          feedTPerH: 29.8,
          millInletTempC: 214,
          millOutletTempC: 92.4,
          inertFlowNm3PerH: 10_200,
          trip: null,
          maintenance: null,
          driveRunning: true,
          feedOn: true,
          hotGas: true,
          inertOn: true,
          coalInside: true,
        },
      },
    ],
    analysers: [
      {
        id: "vm2-a131",
        name: "Mill outlet O2 analyser",
        state: "ok",
        reasons: [],
        sinceMs: nowMs - 185 * MIN,
        plantRunning: true,
        signals: [{ signal: "vm2-o2", role: "value", state: "ok", reasons: [] }],
      },
      {
        id: "s21-a311",
        name: "Silo S21 O2/CO analyser",
        state: "stale",
        reasons: [
          "s21-o2: no update for 720 s (expected every 5 s, stale after 3 periods)",
          "s21-co: analyser in function check (NAMUR NE 107 category C: calibration, blowback or multiplexer switching)",
        ],
        sinceMs: nowMs - 12 * MIN + 15_000,
        plantRunning: true,
        signals: [
          { signal: "s21-o2", role: "value", state: "stale", reasons: ["no update for 720 s (expected every 5 s, stale after 3 periods)"] },
          {
            signal: "s21-co",
            role: "value",
            state: "function-check",
            reasons: ["analyser in function check (NAMUR NE 107 category C: calibration, blowback or multiplexer switching)"],
          },
        ],
      },
    ],
    advisories: [
      advisory({
        id: "co-rate-bf2-outlet",
        tier: "caution",
        title: "CO rising at filter outlet",
        quantity: "co.bf2-outlet.gradientPpmPerMin",
        unitId: "bf2",
        value: 6.8,
        unit: "ppm/min",
        limit: 5,
        raisedAtMs: nowMs - 3 * MIN,
        lastChangeMs: nowMs - 3 * MIN,
        check: "filter hopper temperatures and CO at the filter inlet",
      }),
      advisory({
        id: "o2-margin-bf2",
        tier: "caution",
        state: "ack",
        title: "O2 margin small at bag filter",
        quantity: "o2.bf2.marginPctPt",
        unitId: "bf2",
        value: 0.9,
        unit: "pt",
        limit: 1,
        direction: "low",
        raisedAtMs: nowMs - 14 * MIN,
        lastChangeMs: nowMs - 12 * MIN,
        ackedBy: "J. Ferris",
        ackedAtMs: nowMs - 12 * MIN,
        check: "false air at the filter doors and rotary valves",
      }),
      advisory({
        id: "co-rise-bf2-outlet",
        tier: "warning",
        title: "CO far above baseline at filter outlet",
        quantity: "co.bf2-outlet.riseAboveBaselinePpm",
        unitId: "bf2",
        value: 312,
        unit: "ppm",
        limit: 300,
        raisedAtMs: nowMs - 1 * MIN,
        lastChangeMs: nowMs - 1 * MIN,
        check: "filter hopper for smouldering deposits; follow the site's heating procedure",
      }),
      advisory({
        id: "dew-margin-bf2-outlet",
        tier: "notice",
        title: "Dew point margin below 20 K at filter outlet",
        quantity: "dewpoint.bf2-outlet.marginK",
        unitId: "bf2",
        value: 18.1,
        unit: "K",
        limit: 20,
        direction: "low",
        raisedAtMs: nowMs - 25 * MIN,
        lastChangeMs: nowMs - 25 * MIN,
        check: "hot-gas temperature and false air after the filter",
      }),
      advisory({
        id: "dew-margin-vm2-outlet",
        tier: "notice",
        state: "rtn-unack",
        title: "Dew point margin below 20 K at mill outlet",
        quantity: "dewpoint.vm2-outlet.marginK",
        unitId: "vm2",
        value: 38.5,
        unit: "K",
        limit: 20,
        direction: "low",
        raisedAtMs: nowMs - 95 * MIN,
        lastChangeMs: nowMs - 40 * MIN,
        check: "warm-up ramp of the hot-gas generator",
      }),
    ],
  };
}

type DeltaFields = Omit<Extract<LiveMessage, { type: "delta" }>, "type" | "nowMs">;

/** Calls the server made, so tests can see what it asked for. */
export interface FakeCalls {
  advisories: { limit: number }[];
  acknowledge: { id: string; by: string; note: string | undefined }[];
  trend: { series: string; fromMs: number; toMs: number }[];
  getState: number;
}

export class FakeDeps implements AppDeps {
  state: PlantState;
  healthStatus: "ok" | "degraded" = "ok";
  transitions: AdvisoryTransition[] = [];
  /** Trend data per series: [tMs, value] at one-minute steps over the two hours before now. */
  series = new Map<string, TrendPoint[]>();
  calls: FakeCalls = { advisories: [], acknowledge: [], trend: [], getState: 0 };
  readonly dashboardDir: string;
  private readonly listeners = new Set<(msg: LiveMessage) => void>();

  constructor(opts: { nowMs?: number; dashboardDir?: string } = {}) {
    this.state = fakePlantState(opts.nowMs ?? FAKE_NOW_MS);
    this.dashboardDir = opts.dashboardDir ?? DASHBOARD_DIR;
    for (const s of this.state.signals) {
      const points: TrendPoint[] = [];
      for (let t = this.state.nowMs - 120 * MIN; t <= this.state.nowMs; t += MIN) {
        points.push({ tMs: t, value: s.value, quality: "good" });
      }
      this.series.set(s.id, points);
    }
    this.series.set("dewpoint.bf2-outlet.marginK", [
      { tMs: this.state.nowMs - 30 * MIN, value: 21.5, quality: "ok" },
      { tMs: this.state.nowMs - 10 * MIN, value: null, quality: "unknown" },
      { tMs: this.state.nowMs, value: 18.1, quality: "ok" },
    ]);
  }

  get listenerCount(): number {
    return this.listeners.size;
  }

  getState(): PlantState {
    this.calls.getState += 1;
    return this.state;
  }

  health(): HealthView {
    return {
      status: this.healthStatus,
      advisoryOnly: ADVISORY_ONLY,
      startedAtMs: this.state.nowMs - 3_600_000,
      nowMs: this.state.nowMs,
      sources: [{ id: "plant-mqtt", kind: "mqtt", connected: this.healthStatus === "ok", samples: 1234, rejected: 2, lastError: null }],
      historian: { state: "ok", queueDepth: 0, rowsWritten: 98765, lastError: null },
    };
  }

  advisories(opts: { limit: number }): { active: AdvisoryView[]; history: AdvisoryTransition[] } {
    this.calls.advisories.push(opts);
    return { active: this.state.advisories, history: this.transitions.slice(0, opts.limit) };
  }

  acknowledge(advisoryId: string, by: string, note?: string): AckResult {
    this.calls.acknowledge.push({ id: advisoryId, by, note });
    const current = this.state.advisories.find((a) => a.id === advisoryId);
    if (current === undefined) return { ok: false, status: 404, error: `no current advisory with id "${advisoryId}"` };
    if (current.state === "ack" || current.state === "normal") {
      return { ok: false, status: 409, error: `advisory "${advisoryId}" is already acknowledged (by ${current.ackedBy ?? "?"})` };
    }
    const atMs = this.state.nowMs;
    const to = current.state === "rtn-unack" ? "normal" : "ack";
    const updated: AdvisoryView = { ...current, state: to, ackedBy: by, ackedAtMs: atMs, lastChangeMs: atMs };
    const transition: AdvisoryTransition = {
      kind: "advisory",
      atMs,
      advisoryId,
      ruleId: current.ruleId,
      transition: "ack",
      from: current.state,
      to,
      tier: current.tier,
      value: current.value,
      limit: current.limit,
      by,
      why: note ?? "acknowledged",
    };
    this.transitions.unshift(transition);
    const advisories = this.state.advisories.map((a) => (a.id === advisoryId ? updated : a)).filter((a) => a.state !== "normal");
    this.update({ advisories, transitions: [transition] });
    return { ok: true, advisory: updated };
  }

  trend(series: string, fromMs: number, toMs: number): TrendPoint[] {
    this.calls.trend.push({ series, fromMs, toMs });
    const points = this.series.get(series);
    if (points === undefined) throw new UnknownSeriesError(series);
    return points.filter((p) => p.tMs >= fromMs && p.tMs <= toMs);
  }

  subscribe(listener: (msg: LiveMessage) => void): () => void {
    this.listeners.add(listener);
    return () => {
      this.listeners.delete(listener);
    };
  }

  /** Send a message to every subscriber as the daemon would. */
  push(msg: LiveMessage): void {
    for (const listener of this.listeners) listener(msg);
  }

  /** Patch the state (entries replace by id, advisories whole) and push the matching delta. */
  update(fields: DeltaFields, advanceMs = 0): void {
    const nowMs = this.state.nowMs + advanceMs;
    const replace = <T extends { id: string }>(list: T[], changes: T[] | undefined): T[] =>
      changes === undefined ? list : list.map((e) => changes.find((c) => c.id === e.id) ?? e);
    this.state = {
      ...this.state,
      nowMs,
      signals: replace(this.state.signals, fields.signals),
      units: replace(this.state.units, fields.units),
      dewPoints: replace(this.state.dewPoints, fields.dewPoints),
      coPoints: replace(this.state.coPoints, fields.coPoints),
      advisories: fields.advisories ?? this.state.advisories,
    };
    this.push({ type: "delta", nowMs, ...fields });
  }
}
