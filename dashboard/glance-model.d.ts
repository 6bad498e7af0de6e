// Types for glance-model.js (plain JS in the browser, typed here for the tests).
import type { AdvisoryState, AdvisoryView, DewPointView, InertingState, InertingView, SignalView, Tier } from "../src/core/types.js";

export function sortAdvisories(advisories: readonly AdvisoryView[]): AdvisoryView[];

export type HeldState = "shelved" | "suppressed" | "out-of-service";
export const HELD_STATES: readonly HeldState[];
export function isHeld(advisory: Pick<AdvisoryView, "state">): boolean;
export function needsAttention(advisory: Pick<AdvisoryView, "state" | "ackedBy">): boolean;
export function splitAdvisories(advisories: readonly AdvisoryView[]): { annunciated: AdvisoryView[]; held: AdvisoryView[] };
export const STATE_WORDS: Partial<Record<AdvisoryState, string>>;
export function advisoryStateText(
  advisory: AdvisoryView,
  nowMs: number,
): { word: string | null; text: string; detail: string | null; acked: boolean };
export const SHELVABLE_TIERS: readonly Tier[];
export type AdvisoryAction = "ack" | "reset" | "shelve" | "unshelve";
export function advisoryActions(advisory: AdvisoryView): AdvisoryAction[];
export function advisoryMarks(advisory: Pick<AdvisoryView, "firstOut" | "chattering" | "standing">): string[];
export type ShelveChoice = { id: string; label: string } & ({ durationS: number; oneShot?: undefined } | { oneShot: true; durationS?: undefined });
export const SHELVE_CHOICES: readonly ShelveChoice[];
export type CommandBody = { reason?: string; durationS?: number; oneShot?: true };
export function commandBody(
  kind: AdvisoryAction,
  fields: { reason?: string | null; choice?: string | null },
): { body: CommandBody; error?: undefined } | { error: string; body?: undefined };
export function formatAge(ms: number): string;
export function formatNumber(value: number | null | undefined, digits: number): string;
export function formatSigned(value: number | null | undefined, digits: number): string;
export function formatClock(ms: number): string;
export function formatDateTime(ms: number): string;
export function formatWhen(ms: number, nowMs: number): string;
export function staleText(signal: SignalView | undefined, nowMs: number): string | null;
export const INERTING_WORDS: Record<InertingState, string>;
export const INERTING_TIER: Partial<Record<InertingState, Tier>>;
export const O2_SCALE_MAX_PCT: number;
export function o2BarGeometry(
  inerting: InertingView,
  scaleMaxPct?: number,
): { value: number | null; limit: number; bandStart: number };
export function lowestMargin(dewPoints: readonly DewPointView[]): DewPointView | null;
export function advisoryTarget(advisory: Pick<AdvisoryView, "quantity">): { kind: string; id: string } | null;
export function worstTierFor(advisories: readonly AdvisoryView[], kind: string, id: string): Tier | null;

export interface History {
  readonly windowMs: number;
  readonly capacity: number;
}
export function createHistory(windowMs: number, capacity: number): History;
export function recordPoint(history: History, id: string, tMs: number, value: number | null): void;
export function readSeries(history: History, id: string, nowMs: number): [number, number | null][];
export function pruneHistory(history: History, keepIds: Iterable<string>): void;
export function sparklineRuns(
  series: readonly [number, number | null][],
  fromMs: number,
  toMs: number,
  width: number,
  height: number,
  minSpan?: number,
): { runs: string[]; min: number | null; max: number | null };
export const PHASE_WORDS: Record<string, string>;
export function phaseText(phase: { phase: string; sinceMs: number }, nowMs: number): { word: string; since: string };
export function dewTrendText(
  summary: { status: string; lowestMarginK: number | null; lowestMarginTrendKPerMin: number | null; shortestTimeToCondensationS: number | null } | undefined,
): { trend: string; time: string | null } | null;
export function quietText(lastMessageAtMs: number, browserNowMs: number, quietMs: number): string | null;
export function signalProblems(signals: readonly SignalView[], nowMs: number): { problem: string; names: string[] }[];
export function shortReason(reason: string | null | undefined): string;
