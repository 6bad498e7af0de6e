// Types for trends-model.js (plain JS in the browser, typed here for the tests).
import type { AdvisoryTransition, AdvisoryView, PlantState, Tier } from "../src/core/types.js";

export interface TrendRange {
  id: string;
  label: string;
  ms: number;
}
export const RANGES: readonly TrendRange[];
export const DEFAULT_RANGE: string;
export const MAX_SERIES: number;

export interface SeriesInfo {
  key: string;
  label: string;
  unit: string;
  group: string;
}
export function seriesCatalog(state: PlantState): SeriesInfo[];
export function defaultSelection(catalog: readonly SeriesInfo[], state: PlantState): string[];

export interface Zoom {
  fromMs: number;
  toMs: number;
}
export function parseQuery(
  search: string,
  catalog: readonly SeriesInfo[],
  state: PlantState,
): { range: string; series: string[]; unknown: string[]; zoom: Zoom | null };
export function buildQuery(page: { range: string; series: readonly string[]; zoom: Zoom | null }): string;
export function timeWindow(range: string, zoom: Zoom | null, nowMs: number): Zoom;
export function panesFor(series: readonly string[], catalog: readonly SeriesInfo[]): { unit: string; series: SeriesInfo[] }[];

export const PENS: readonly { stroke: string; dash: number[] }[];

export type TrendTuple = [number, number | null, string] | [number, number | null, string, number | null, number | null];
export function trendColumns(points: readonly TrendTuple[]): {
  t: number[];
  v: (number | null)[];
  lo: (number | null)[];
  hi: (number | null)[];
  banded: boolean;
};

export interface Limit {
  value: number;
  tier: Tier | null;
  label: string;
}
/** A rule as GET /api/rules gives it (src/server/rules.ts RuleView): what limitsFor needs. */
export interface ConfiguredRule {
  id: string;
  quantity: string;
  quantityUnit: string;
  direction: "high" | "low" | null;
  tiers: Partial<Record<Tier, number>> | null;
}
export function limitsFor(key: string, state: PlantState, history?: readonly AdvisoryTransition[], configured?: readonly ConfiguredRule[]): Limit[];

export const MARKED_TRANSITIONS: ReadonlySet<string>;
export interface AdvisoryMark {
  atMs: number;
  tier: Tier;
  advisoryId: string;
  transition: string;
  hollow: boolean;
  title: string;
  why: string;
  quantity: string | null;
}
export function advisoryMarks(history: readonly AdvisoryTransition[], fromMs: number, toMs: number, advisories?: readonly AdvisoryView[]): AdvisoryMark[];
export function markBelongs(mark: Pick<AdvisoryMark, "quantity">, pane: { series: readonly Pick<SeriesInfo, "key">[] }): boolean;
export function pointsFor(widthPx: number): number;
export function extent(columns: readonly (readonly (number | null | undefined)[])[]): { min: number; max: number } | null;
