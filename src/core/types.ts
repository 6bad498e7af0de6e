// The contracts between the stages of the data's way:
//
//   sources ──Sample──▶ core (pure) ──CoreEvent──▶ historian / live hub / notifier
//                         ▲ Command, Tick(now)
//
// Everything here is plain data. The core never reads the wall clock: every time
// is an argument in epoch milliseconds (UTC), named *Ms.

/** Data quality, after OPC UA's three severities. */
export type Quality = "good" | "uncertain" | "bad";

/** One value of one configured signal, already converted to its canonical unit. */
export interface Sample {
  /** Signal id from the config (not the plant tag). */
  signal: string;
  /** Value in the signal's canonical unit (see config/units.ts). NaN only with quality "bad". */
  value: number;
  quality: Quality;
  /** Why the quality is not good (an OPC UA StatusCode name, "decode-error", ...). */
  qualityReason?: string;
  /** Time the value was measured (from the payload or the server); gradients use this. */
  sourceTimeMs: number;
  /** Time the edge box received it; staleness uses this. */
  receiveTimeMs: number;
  /** Analyser in function check (calibration, blowback, multiplexer switch): NAMUR NE 107 category C. */
  functionCheck?: boolean;
}

export type Tier = "notice" | "caution" | "warning";
export const TIERS: readonly Tier[] = ["notice", "caution", "warning"];
export const tierRank = (t: Tier): number => TIERS.indexOf(t);

/**
 * Advisory states, after ISA-18.2 / IEC 62682:
 * normal; active and unacknowledged; active and acknowledged; returned to normal while still
 * unacknowledged; latched (returned to normal, kept until someone resets it); and the three
 * states in which an advisory is not annunciated: shelved (by an operator, time-limited),
 * suppressed by design (phase, analyser in function check) and out of service (administrative).
 */
export type AdvisoryState =
  | "normal"
  | "unack"
  | "ack"
  | "rtn-unack"
  | "latched"
  | "shelved"
  | "suppressed"
  | "out-of-service";

/**
 * Inerting state per unit, our own names. "unknown" whenever the data behind it cannot be trusted;
 * "purging" while inert gas is purging the unit and its measured O2 is not yet inert.
 */
export type InertingState = "inert" | "marginal" | "not-inert" | "purging" | "unknown";

/** Who may do what: out of service needs an engineer. */
export type Role = "operator" | "engineer";

interface CommandBase {
  advisoryId: string;
  by: string;
  atMs: number;
  role?: Role;
}

/** Commands from people, always with who, when and why. */
export type Command =
  | (CommandBase & { kind: "ack"; note?: string })
  /** Reset a latched advisory once its condition has returned to normal. */
  | (CommandBase & { kind: "reset"; note?: string })
  /** Shelve: timed (durationS, at most the configured maximum) or one-shot (until the condition clears, within the maximum). */
  | (CommandBase & { kind: "shelve"; reason: string; durationS?: number; oneShot?: boolean })
  | (CommandBase & { kind: "unshelve"; reason?: string })
  | (CommandBase & { kind: "out-of-service"; reason: string })
  | (CommandBase & { kind: "return-to-service"; reason?: string });

export type CommandKind = Command["kind"];

/** An advisory as shown and stored. */
export interface AdvisoryView {
  /** Stable id: the rule id (one advisory per rule and instance). */
  id: string;
  ruleId: string;
  state: AdvisoryState;
  /** Tier while active; the last tier once returned to normal. */
  tier: Tier;
  unitId: string | null;
  title: string;
  /** Full text, always containing "advisory only". */
  message: string;
  /** Quantity the rule watches (a derived key, see DerivedKey) and its live value. */
  quantity: string;
  value: number | null;
  unit: string;
  /** The threshold of the current tier. */
  limit: number;
  direction: "high" | "low";
  cause: string;
  consequence: string;
  check: string;
  /** Where the threshold comes from: site hazard study, a named standard, or common practice. */
  origin: string;
  raisedAtMs: number;
  lastChangeMs: number;
  ackedBy: string | null;
  ackedAtMs: number | null;
  /** Rule latches: after the condition clears it stays until reset. */
  latching: boolean;
  /** The condition is present now (false once returned to normal, and while unknown). */
  conditionActive: boolean;
  /** Shelved, suppressed or out of service: who, why and until when. */
  shelvedUntilMs: number | null;
  oneShot: boolean;
  suppressedBy: string | null;
  /** The person who shelved it or took it out of service, and the reason they gave. */
  heldBy: string | null;
  heldReason: string | null;
  /** Nuisance marks (they never hide a warning from the screen). */
  chattering: boolean;
  firstOut: boolean;
  standing: boolean;
  position: string;
  /** A state rule's states and the state now (null for a threshold rule). */
  states: string[] | null;
  stateValue: string | null;
}

export type TransitionKind =
  | "raise"
  | "escalate"
  | "de-escalate"
  | "ack"
  | "clear"
  | "re-alert"
  | "reset"
  | "shelve"
  | "unshelve"
  | "suppress"
  | "unsuppress"
  | "out-of-service"
  | "return-to-service";

/** One advisory lifecycle transition; every one is stored and pushed. */
export interface AdvisoryTransition {
  kind: "advisory";
  atMs: number;
  advisoryId: string;
  ruleId: string;
  /**
   * raise (or re-raise) | escalate to a higher tier | de-escalate | ack | clear (condition returned
   * to normal) | re-alert (acknowledged too long) | reset (of a latched advisory) | shelve | unshelve
   * | suppress | unsuppress (by design) | out-of-service | return-to-service
   */
  transition: TransitionKind;
  from: AdvisoryState;
  to: AdvisoryState;
  tier: Tier;
  value: number | null;
  limit: number;
  /** Who caused it: "millwarden" for rule evaluation, else the user. */
  by: string;
  why: string;
}

/**
 * Nuisance control, per operator position (ISA-18.2 / EEMUA 191 figures in DESIGN.md §5):
 * chatter (3 or more raises of one advisory within 60 s), flood (more than 10 raises within
 * 10 min; ends below 5 within 10 min), standing (active over 24 h).
 */
export interface NuisanceEvent {
  kind: "nuisance";
  atMs: number;
  type: "chatter" | "chatter-end" | "flood-start" | "flood-end" | "standing";
  position: string;
  /** The advisory concerned (chatter, standing), or the first-out advisory of a flood. */
  advisoryId: string | null;
  /** Raises counted in the window that decided it. */
  count: number;
  why: string;
}

/** A named discrete state changed: "phase.<unit>", "inerting.<unit>", "analyser.<id>". */
export interface StateChange {
  kind: "state";
  atMs: number;
  key: string;
  /** null when it cannot be told. */
  value: string | null;
}

/** A derived value as stored in the historian, keyed like "dewpoint.bf1-outlet.marginK". */
export interface DerivedValue {
  kind: "derived";
  key: string;
  atMs: number;
  /**
   * null when it cannot be computed (status says why); +Infinity for a time-to-limit whose
   * trend is known but not approaching (stored as NULL, shown as "not approaching").
   */
  value: number | null;
  status: "ok" | "unknown";
  reason?: string;
}

export type CoreEvent = DerivedValue | AdvisoryTransition | NuisanceEvent | StateChange;

// ---- The view model: what GET /api/state returns and /api/live patches. ----

export interface SignalView {
  id: string;
  name: string;
  /** Canonical unit symbol, e.g. "°C", "Pa", "% vol", "ppm". */
  unit: string;
  value: number | null;
  quality: Quality | null;
  qualityReason: string | null;
  sourceTimeMs: number | null;
  receiveTimeMs: number | null;
  /** Expected update period from the config; stale when no update within 3 periods. */
  expectedPeriodS: number;
  stale: boolean;
  functionCheck: boolean;
}

export type { InertingView, UnitView } from "../analytics/oxygen-monitor.js";
export type { DewPointView } from "../analytics/dew-point-monitor.js";
export type { CoPointView } from "../analytics/co-monitor.js";
import type { DewPointMonitor } from "../analytics/dew-point-monitor.js";
import type { CoMonitor } from "../analytics/co-monitor.js";
import type { OxygenMonitor } from "../analytics/oxygen-monitor.js";
export type { PhaseView } from "../analytics/phase-monitor.js";
export type { AnalyserView, AnalyserSignalView } from "../analytics/health-monitor.js";
import type { PhaseMonitor } from "../analytics/phase-monitor.js";
import type { HealthMonitor } from "../analytics/health-monitor.js";

/**
 * What GET /api/state returns: the common part, and each monitor's own part (its
 * view() decides the keys, so a family grows without touching this file).
 */
export type PlantState = {
  advisoryOnly: string;
  site: { name: string; plant: string };
  nowMs: number;
  signals: SignalView[];
  /** Advisories on screen: active, returned but unacknowledged, latched, shelved, out of service (AdvisoryBoard.views). */
  advisories: AdvisoryView[];
} & ReturnType<OxygenMonitor["view"]> &
  ReturnType<DewPointMonitor["view"]> &
  ReturnType<CoMonitor["view"]> &
  ReturnType<PhaseMonitor["view"]> &
  ReturnType<HealthMonitor["view"]>;

/** The lists in PlantState whose entries carry an id: a delta patches them entry by entry. */
export type KeyedSection = Exclude<
  { [K in keyof PlantState]: PlantState[K] extends readonly { id: string }[] ? K : never }[keyof PlantState],
  "advisories"
>;

/** Messages on the WebSocket /api/live. Entries in a delta replace those with the same id. */
export type LiveMessage =
  | { type: "snapshot"; state: PlantState }
  | ({
      type: "delta";
      nowMs: number;
      /** When present, the complete list of current advisories (it is short). */
      advisories?: AdvisoryView[];
      transitions?: AdvisoryTransition[];
    } & { [K in KeyedSection]?: PlantState[K] });

/** The words every screen and message carries. */
export const ADVISORY_ONLY =
  "ADVISORY ONLY: millwarden is not a safety system. The plant's certified protection system governs; " +
  "thresholds must come from the site's own hazard study.";
