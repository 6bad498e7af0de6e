// Types for pages-model.js (plain JS in the browser, typed here for the tests).
import type { AdvisoryTransition, AdvisoryView, PlantState, Tier } from "../src/core/types.js";
import type { RuleView } from "../src/server/rules.js";

export interface HistoryFilter {
  unit: string;
  tier: string;
  rule: string;
}
export function parseHistoryFilter(search: string): HistoryFilter;
export function historyFilterQuery(filter: Partial<HistoryFilter>): string;
export function filterHistory(history: readonly AdvisoryTransition[], filter: Partial<HistoryFilter>, rules?: readonly Pick<RuleView, "id" | "unitId">[], advisories?: readonly Pick<AdvisoryView, "ruleId" | "unitId">[]): AdvisoryTransition[];
export function historyFacets(history: readonly AdvisoryTransition[], rules?: readonly Pick<RuleView, "id" | "unitId">[]): { units: string[]; tiers: Tier[]; rules: string[] };

type UnitState = PlantState["units"][number];
export function analysersOfUnit(state: PlantState, unitId: string): PlantState["analysers"];
export interface UnitDetail {
  unit: UnitState;
  phase: PlantState["phases"][number] | null;
  inerting: UnitState["inerting"];
  analysers: PlantState["analysers"];
  dewPoints: PlantState["dewPoints"];
  acidDewPoints: PlantState["acidDewPoints"];
  moistureSources: PlantState["moistureSources"];
  coPoints: PlantState["coPoints"];
  advisories: AdvisoryView[];
}
export function unitDetail(state: PlantState, unitId: string): UnitDetail | null;
export function purgeRows(purge: NonNullable<NonNullable<UnitState["inerting"]>["purge"]> | null, fmt: (value: number, digits: number) => string): [string, string][];
export function durationText(ms: number): string;
export function shareText(ms: number, spanMs: number): string;
export function parseHandoverHours(search: string): 8 | 12;
export const ACTION_WORDS: Readonly<Record<string, string>>;
export function actionText(action: { kind: string; by: string; why: string }, whenText: string): string;
export function mayReadAudit(session: { user: string | null; role: string | null } | null): boolean;
export function auditDetailText(detail: unknown): string;
export function pageActions(advisory: Pick<AdvisoryView, "state">, glanceActions: readonly string[]): string[];
export function outOfServiceBody(kind: string, reason: string): { body: { reason: string } } | { error: string } | null;
