// The narrow interface between the engine and each family of indicators (dew points,
// CO, oxygen, phase, analyser health). A monitor keeps its own state, takes the
// samples it cares about, and at each tick computes its values from the context.
// Like the engine, a monitor never reads the clock and never does I/O.
import type { Trust } from "../analytics/signal-state.js";
import type { Sample } from "./types.js";

/** Operating phase names (our own, in trade words); see src/analytics/phase.ts. */
export type { MillPhase } from "../analytics/phase.js";
import type { MillPhase } from "../analytics/phase.js";

export interface TickContext {
  readonly nowMs: number;
  /** Whether a signal can be trusted now: fresh, good quality, not in function check, its analyser healthy. */
  trust(signalId: string): Trust;
  /** The operating phase of a unit, when a phase is configured for it. */
  phase(unitId: string): MillPhase | null;
  /** Record a derived value (null = unknown, with the reason); it is stored and rules can watch it. */
  emit(key: string, value: number | null, reason: string): void;
  /** A derived value recorded earlier in this tick (monitors run in a fixed order). */
  derived(key: string): number | null | undefined;
}

export interface Monitor {
  /** Each accepted sample, in source-time order per signal. */
  ingest?(s: Sample): void;
  /** Compute at `ctx.nowMs`. */
  tick(ctx: TickContext): void;
}
