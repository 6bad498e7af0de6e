// An in-memory AppDeps for the server tests and for looking at the dashboard without
// the daemon. Invented plant: Tarnholm Works, coal grinding line 2. The figures are
// plausible for such a line but invented; nothing here is a reference value.
//
// The plant state is written out by hand; the advisories are not: they come from the real
// advisory board (src/advisories), driven through an invented shift, so a command sent to the
// fake meets the real lifecycle and its real 400/403/404/409 answers.
import { fileURLToPath } from "node:url";
import type { RuleInput } from "../../src/advisories/advisory.js";
import { AdvisoryBoard } from "../../src/advisories/board.js";
import type { AdvisoryPolicy, RuleConfig } from "../../src/config/schema.js";
import {
  ADVISORY_ONLY,
  type AdvisoryTransition,
  type AdvisoryView,
  type Command,
  type CommandKind,
  type LiveMessage,
  type PlantState,
} from "../../src/core/types.js";
import { hashPassword, type ScryptParams } from "../../src/server/passwords.js";
import type { AccountRole, AccountStore } from "../../src/store/accounts.js";
import { Historian } from "../../src/store/historian.js";
import {
  UnknownSeriesError,
  type AckResult,
  type AdvisoryCommandBody,
  type AppDeps,
  type HealthView,
  type TrendPoint,
} from "../../src/server/deps.js";

export const DASHBOARD_DIR = fileURLToPath(new URL("../../dashboard/", import.meta.url));

/** The lowest scrypt cost passwords.ts accepts: tests need the checks, not the cost. */
export const TEST_SCRYPT: ScryptParams = { logN: 10, r: 8, p: 1 };

/** 2024-11-14 05:42:10 UTC: the fake plant's "now". */
export const FAKE_NOW_MS = Date.UTC(2024, 10, 14, 5, 42, 10);
const SEC = 1000;
const MIN = 60_000;
const HOUR = 60 * MIN;

// ---- Advisories: the real board, driven through an invented shift ----

/** The schema's defaults (the figures of DESIGN.md §5). */
export const FAKE_POLICY: AdvisoryPolicy = {
  maxShelveS: 8 * 3600,
  shelveWarnings: false,
  chatterCount: 3,
  chatterWindowS: 60,
  floodCount: 10,
  floodEndCount: 5,
  floodWindowS: 600,
  standingS: 24 * 3600,
};

/** From `offsetMs` before (negative) the fake's now on, the rule's value, and why it is suppressed. */
type Step = [offsetMs: number, value: number | null, suppressedBy?: string];

interface ScriptedRule {
  rule: RuleConfig;
  unit: string;
  label: string;
  /** Before the first step the value is unknown. */
  steps: Step[];
}

function rule(r: Pick<RuleConfig, "id" | "title" | "unit" | "quantity" | "tiers" | "check"> & Partial<RuleConfig>): RuleConfig {
  return {
    direction: "high",
    deadband: 0,
    onDelayS: 0,
    offDelayS: 0,
    latching: false,
    position: "control-room",
    cause: "invented for tests",
    consequence: "invented for tests",
    origin: "common practice (invented for tests)",
    ...r,
  };
}

const LOW_DEW = { notice: 20, caution: 15, warning: 5 };
const LOW_O2 = { notice: 2, caution: 1, warning: 0 };

const SCRIPT: ScriptedRule[] = [
  {
    rule: rule({ id: "co-rate-bf2-outlet", title: "CO rising at filter outlet", unit: "bf2", quantity: "co.bf2-outlet.gradientPpmPerMin", tiers: { caution: 5, warning: 15 }, check: "filter hopper temperatures and CO at the filter inlet" }),
    unit: "ppm/min",
    label: "CO gradient at the filter outlet",
    steps: [[-3 * MIN, 6.8]],
  },
  {
    // Acknowledged a day ago and still present: a standing advisory.
    rule: rule({ id: "o2-margin-bf2", title: "O2 margin small at bag filter", unit: "bf2", quantity: "o2.bf2.marginPctPt", direction: "low", tiers: LOW_O2, check: "false air at the filter doors and rotary valves" }),
    unit: "pt",
    label: "O2 margin at the bag filter",
    steps: [[-26 * HOUR, 0.9]],
  },
  {
    rule: rule({ id: "co-rise-bf2-outlet", title: "CO far above baseline at filter outlet", unit: "bf2", quantity: "co.bf2-outlet.riseAboveBaselinePpm", tiers: { caution: 75, warning: 300 }, check: "filter hopper for smouldering deposits; follow the site's heating procedure" }),
    unit: "ppm",
    label: "CO above baseline at the filter outlet",
    steps: [[-1 * MIN, 312]],
  },
  {
    rule: rule({ id: "dew-margin-bf2-outlet", title: "Dew point margin below 20 K at filter outlet", unit: "bf2", quantity: "dewpoint.bf2-outlet.marginK", direction: "low", tiers: LOW_DEW, check: "hot-gas temperature and false air after the filter" }),
    unit: "K",
    label: "dew point margin at the filter outlet",
    steps: [[-25 * MIN, 18.1]],
  },
  {
    rule: rule({ id: "dew-margin-vm2-outlet", title: "Dew point margin below 20 K at mill outlet", unit: "vm2", quantity: "dewpoint.vm2-outlet.marginK", direction: "low", tiers: LOW_DEW, check: "warm-up ramp of the hot-gas generator" }),
    unit: "K",
    label: "dew point margin at the mill outlet",
    steps: [
      [-95 * MIN, 19.2],
      [-40 * MIN, 38.5],
    ],
  },
  {
    // Latching: the peak has passed, the advisory stays until someone resets it.
    rule: rule({ id: "co-peak-vm2-outlet", title: "CO peak above baseline at mill outlet", unit: "vm2", quantity: "co.vm2-outlet.riseAboveBaselinePpm", tiers: { caution: 75 }, latching: true, check: "mill table and classifier for deposits once the mill is stopped" }),
    unit: "ppm",
    label: "CO above baseline at the mill outlet",
    steps: [
      [-30 * MIN, 96],
      [-10 * MIN, 22],
    ],
  },
  {
    // Shelved for a damper test; its condition has cleared since, the shelve runs on.
    rule: rule({ id: "o2-time-vm2", title: "Mill O2 rising toward its limit", unit: "vm2", quantity: "o2.vm2.timeToLimitS", direction: "low", tiers: { caution: 600, warning: 180 }, check: "fresh-air damper and inert gas flow" }),
    unit: "s",
    label: "time to the O2 limit at the mill",
    steps: [
      [-22 * MIN, 480],
      [-15 * MIN, 6300],
    ],
  },
  {
    // Suppressed by design while the silo analyser is in function check (condition still present).
    rule: rule({ id: "co-rate-s21-top", title: "CO rising in silo S21", unit: "s21", quantity: "co.s21-top.gradientPpmPerMin", tiers: { caution: 0.5, warning: 2 }, check: "silo temperatures and the inert gas blanket" }),
    unit: "ppm/min",
    label: "CO gradient at the silo top",
    steps: [
      [-50 * MIN, 0.7],
      [-6 * MIN, null, "s21-co in function check"],
    ],
  },
  {
    // Out of service: a failing thermocouple read low, then went open circuit.
    rule: rule({ id: "dew-margin-bf2-hopper", title: "Dust hopper close to its water dew point", unit: "bf2", quantity: "dewpoint.bf2-hopper.marginK", direction: "low", tiers: LOW_DEW, check: "hopper heating and the hopper thermocouple" }),
    unit: "K",
    label: "dew point margin at the dust hopper",
    steps: [
      [-3 * HOUR, 31],
      [-150 * MIN, 11],
      [-1 * HOUR, null],
    ],
  },
  {
    // Chattering around its notice threshold (this invented rule has no deadband), now clear.
    rule: rule({ id: "o2-margin-vm2", title: "O2 margin small at mill", unit: "vm2", quantity: "o2.vm2.marginPctPt", direction: "low", tiers: LOW_O2, check: "fresh-air damper and the mill door seals" }),
    unit: "pt",
    label: "O2 margin at the mill",
    steps: [
      [-240 * SEC, 1.9],
      [-230 * SEC, 2.1],
      [-220 * SEC, 1.9],
      [-210 * SEC, 2.1],
      [-200 * SEC, 1.9],
      [-190 * SEC, 2.1],
    ],
  },
];

/** What people did during the invented shift. */
function scriptedCommands(nowMs: number): Command[] {
  return [
    { kind: "ack", advisoryId: "o2-margin-bf2", by: "J. Ferris", atMs: nowMs - 25 * HOUR, note: "doors checked; rotary valve seal on the work list" },
    { kind: "out-of-service", advisoryId: "dew-margin-bf2-hopper", by: "M. Okafor", role: "engineer", atMs: nowMs - 2 * HOUR, reason: "BF2-TT-215 reads low (failing thermocouple); replacement ordered" },
    { kind: "shelve", advisoryId: "o2-time-vm2", by: "P. Lindqvist", atMs: nowMs - 20 * MIN, reason: "fresh-air damper stroke test by maintenance; O2 rise expected", durationS: 3600 },
  ];
}

function inputAt(s: ScriptedRule, offsetMs: number): RuleInput {
  let step: Step | undefined;
  for (const st of s.steps) if (st[0] <= offsetMs) step = st;
  return { value: step?.[1] ?? null, suppressedBy: step?.[2] ?? null };
}

/**
 * The advisory board after the invented shift, evaluated at every change of the script and at
 * `nowMs`, and its transitions (newest first, as the historian answers).
 */
export function fakeAdvisoryBoard(nowMs = FAKE_NOW_MS): { board: AdvisoryBoard; transitions: AdvisoryTransition[] } {
  const byId = new Map(SCRIPT.map((s) => [s.rule.id, s]));
  const board = new AdvisoryBoard(
    SCRIPT.map((s) => s.rule),
    (r) => ({ unit: byId.get(r.id)!.unit, label: byId.get(r.id)!.label }),
    FAKE_POLICY,
  );
  const commands = scriptedCommands(nowMs);
  const times = [...new Set([...SCRIPT.flatMap((s) => s.steps.map((st) => nowMs + st[0])), ...commands.map((c) => c.atMs), nowMs])].sort((a, b) => a - b);
  const transitions: AdvisoryTransition[] = [];
  const keep = (events: readonly { kind: string }[]) => {
    for (const e of events) if (e.kind === "advisory") transitions.unshift(e as AdvisoryTransition);
  };
  for (const t of times) {
    keep(board.evaluate(t, (a) => inputAt(byId.get(a.id)!, t - nowMs)));
    for (const c of commands) {
      if (c.atMs !== t) continue;
      const r = board.command(c);
      if (!r.ok) throw new Error(`fake advisory script: ${c.kind} of ${c.advisoryId} refused: ${r.error}`);
      keep(r.events);
    }
  }
  return { board, transitions };
}

/** The command the daemon builds from a request body (the same mapping as src/daemon: an admin acts as engineer). */
function toCommand(advisoryId: string, kind: CommandKind, body: AdvisoryCommandBody, atMs: number): Command {
  const role = body.role === "admin" || body.role === "engineer" ? ("engineer" as const) : ("operator" as const);
  const base = { advisoryId, by: body.by, atMs, role };
  switch (kind) {
    case "ack":
      return { ...base, kind, note: body.note };
    case "reset":
      return { ...base, kind, note: body.note };
    case "shelve":
      return { ...base, kind, reason: body.reason ?? "", durationS: body.durationS, oneShot: body.oneShot };
    case "out-of-service":
      return { ...base, kind, reason: body.reason ?? "" };
    case "unshelve":
      return { ...base, kind, reason: body.reason };
    case "return-to-service":
      return { ...base, kind, reason: body.reason };
  }
}

// ---- The plant, by hand ----

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

/** The plant at `nowMs`; the advisories are those of the scripted board unless given. */
export function fakePlantState(nowMs = FAKE_NOW_MS, advisories: AdvisoryView[] = fakeAdvisoryBoard(nowMs).board.views()): PlantState {
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
    advisories,
  };
}

type DeltaFields = Omit<Extract<LiveMessage, { type: "delta" }>, "type" | "nowMs">;

/** Calls the server made, so tests can see what it asked for. */
export interface FakeCalls {
  advisories: { limit: number }[];
  command: { id: string; kind: CommandKind; body: AdvisoryCommandBody }[];
  trend: { series: string; fromMs: number; toMs: number }[];
  getState: number;
}

export class FakeDeps implements AppDeps {
  state: PlantState;
  healthStatus: "ok" | "degraded" = "ok";
  /** The real advisory board behind state.advisories. */
  readonly board: AdvisoryBoard;
  /** Newest first, as the historian answers. */
  transitions: AdvisoryTransition[];
  /** Trend data per series: [tMs, value] at one-minute steps over the two hours before now. */
  series = new Map<string, TrendPoint[]>();
  calls: FakeCalls = { advisories: [], command: [], trend: [], getState: 0 };
  readonly dashboardDir: string;
  /** The real account store and audit log, on an in-memory historian. */
  readonly accounts: AccountStore = Historian.open({ path: ":memory:" }).accounts();
  private readonly listeners = new Set<(msg: LiveMessage) => void>();

  constructor(opts: { nowMs?: number; dashboardDir?: string } = {}) {
    const nowMs = opts.nowMs ?? FAKE_NOW_MS;
    const { board, transitions } = fakeAdvisoryBoard(nowMs);
    this.board = board;
    this.transitions = transitions;
    this.state = fakePlantState(nowMs, board.views());
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

  /** An account with a cheap hash (TEST_SCRYPT), so that a test logs in within milliseconds. */
  async addUser(name: string, role: AccountRole, password: string): Promise<void> {
    this.accounts.addUser(name, role, await hashPassword(password, TEST_SCRYPT), this.state.nowMs);
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

  /**
   * As the daemon does: the command is timed by the daemon's clock (here the fake's data time),
   * goes to the real advisory board, and its transitions follow as a delta with the whole list.
   */
  command(advisoryId: string, kind: CommandKind, body: AdvisoryCommandBody): AckResult {
    this.calls.command.push({ id: advisoryId, kind, body });
    const r = this.board.command(toCommand(advisoryId, kind, body, this.state.nowMs));
    if (!r.ok) return r;
    const transitions = r.events.filter((e): e is AdvisoryTransition => e.kind === "advisory");
    this.transitions.unshift(...[...transitions].reverse());
    this.update({ advisories: this.board.views(), transitions });
    return { ok: true, advisory: r.advisory };
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
