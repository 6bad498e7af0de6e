// Health monitor: can each analyser's numbers be trusted now?
//
//   Sample ──▶ AnalyserHealth per member signal (values, loop current, status)
//   Tick ──▶ evaluate each (frozen test only while the plant runs) ──▶ analyser state = worst
//        ──▶ every signal of an analyser that is not ok is untrusted (engine's trust)
//
// An analyser's members are the signals that name it (`analyser:`), plus its loop current
// signal (NAMUR NE 43 bands) and its function-check status signal (non-zero = in function
// check, NAMUR NE 107 category C) when configured. The analyser is as healthy as its worst
// member: one instrument whose output cannot be trusted in one respect is not trusted in any
// (cautious side), and a time-shared analyser holding its other points at their last value
// reads as frozen, not calm.
//
// Whether the plant runs comes from the phase of the analyser's phaseUnit (starting,
// grinding, stopping); without a phaseUnit, or while its phase is unknown, the plant is taken
// as running, so a flat value is called frozen (the cautious side).
import type { SignalConfig } from "../config/schema.js";
import type { AnalyserConfig } from "../config/sections/analysers.js";
import { unitDef } from "../config/units.js";
import type { Monitor, TickContext } from "../core/calculator.js";
import type { Sample } from "../core/types.js";
import { AnalyserHealth, HEALTH_ORDER, type AnalyserHealthState } from "./analyser-health.js";
import { RUNNING_PHASES } from "./phase-monitor.js";

export type { AnalyserHealthState };

/** What a member signal is to its analyser. */
export type MemberRole = "value" | "loop-current" | "function-check";

export interface AnalyserSignalView {
  signal: string;
  role: MemberRole;
  state: AnalyserHealthState;
  reasons: string[];
}

export interface AnalyserView {
  id: string;
  name: string;
  /** The worst state of its signals. */
  state: AnalyserHealthState;
  /** Every condition that applies, worst first, each prefixed with its signal. */
  reasons: string[];
  /** When the analyser's state began (to the tick); null before the first tick. */
  sinceMs: number | null;
  /** Whether the frozen test applied at the last tick (the plant runs, or its phase is not known). */
  plantRunning: boolean;
  signals: AnalyserSignalView[];
}

interface Member {
  signal: string;
  role: MemberRole;
  health: AnalyserHealth;
  view: AnalyserSignalView;
}

interface Entry {
  cfg: AnalyserConfig;
  members: Member[];
  /** Latest value of the status signal says "in function check". */
  statusFunctionCheck: boolean;
  /** Time of the last tick at which the analyser was in function check (its settle time runs from there). */
  lastFunctionCheckMs: number | null;
  view: AnalyserView;
}

const rank = (s: AnalyserHealthState): number => HEALTH_ORDER.indexOf(s);

/** Within the settle time after the analyser's last function check. */
const settling = (e: Entry, nowMs: number): boolean => e.lastFunctionCheckMs !== null && e.cfg.settleS > 0 && nowMs - e.lastFunctionCheckMs < e.cfg.settleS * 1000;

export class HealthMonitor implements Monitor {
  private readonly entries: Entry[] = [];
  /** Signal id → the analyser entries and members it feeds (a signal may serve more than one). */
  private readonly bySignal = new Map<string, { entry: Entry; member: Member }[]>();

  constructor(analysers: AnalyserConfig[], signals: SignalConfig[]) {
    const signalById = new Map(signals.map((s) => [s.id, s]));
    for (const a of analysers) {
      const entry: Entry = {
        cfg: a,
        members: [],
        statusFunctionCheck: false,
        lastFunctionCheckMs: null,
        view: { id: a.id, name: a.name, state: "no-data", reasons: ["no sample received yet"], sinceMs: null, plantRunning: true, signals: [] },
      };
      const add = (s: SignalConfig, role: MemberRole) => {
        const def = unitDef(s.unit);
        const r = s.range?.map(def.toCanonical);
        const member: Member = {
          signal: s.id,
          role,
          health: new AnalyserHealth({
            expectedPeriodS: s.expectedPeriodS,
            frozenWindowS: a.frozenWindowS,
            frozenEpsilon: a.frozenEpsilon,
            range: r ? [Math.min(r[0]!, r[1]!), Math.max(r[0]!, r[1]!)] : undefined,
            loopMa: role === "loop-current",
          }),
          view: { signal: s.id, role, state: "no-data", reasons: ["no sample received yet"] },
        };
        entry.members.push(member);
        const list = this.bySignal.get(s.id) ?? [];
        list.push({ entry, member });
        this.bySignal.set(s.id, list);
      };
      for (const s of signals) if (s.analyser === a.id) add(s, "value");
      const loop = a.loopCurrentSignal ? signalById.get(a.loopCurrentSignal) : undefined;
      if (loop) add(loop, "loop-current");
      const status = a.functionCheckSignal ? signalById.get(a.functionCheckSignal) : undefined;
      if (status) add(status, "function-check");
      entry.view.signals = entry.members.map((m) => m.view);
      this.entries.push(entry);
    }
  }

  ingest(s: Sample): void {
    const list = this.bySignal.get(s.signal);
    if (!list) return;
    for (const { entry, member } of list) {
      if (member.role === "loop-current") {
        member.health.update(Number.isFinite(s.value) ? { ...s, loopCurrentMa: s.value } : s);
      } else if (member.role === "function-check") {
        const on = Number.isFinite(s.value) && s.value !== 0;
        entry.statusFunctionCheck = on;
        member.health.update({ ...s, functionCheck: s.functionCheck === true || on });
      } else {
        // While the status says function check, the values are held or show test gas: they
        // must neither count as measurements for the frozen test nor be trusted.
        member.health.update(entry.statusFunctionCheck ? { ...s, functionCheck: true } : s);
      }
    }
  }

  tick(ctx: TickContext): void {
    for (const e of this.entries) {
      const phase = e.cfg.phaseUnit ? ctx.phase(e.cfg.phaseUnit) : null;
      const plantRunning = phase === null || phase === "unknown" || RUNNING_PHASES.includes(phase);
      for (const m of e.members) {
        // A loop current or a status bit may hold steady while all is well: only values are tested for frozen.
        const r = m.health.evaluate(ctx.nowMs, plantRunning && m.role === "value");
        m.view.state = r.state;
        m.view.reasons = r.reasons;
      }
      // Worst member first (stable: config order among equals), each with all its reasons.
      const v = e.view;
      v.plantRunning = plantRunning;
      const bad = e.members.filter((m) => m.view.state !== "ok").sort((x, y) => rank(x.view.state) - rank(y.view.state));
      let worst: AnalyserHealthState = bad.length ? bad[0]!.view.state : "ok";
      let reasons: string[] | null = null;
      if (worst === "function-check") e.lastFunctionCheckMs = ctx.nowMs;
      else if (settling(e, ctx.nowMs) && rank(worst) > rank("function-check")) {
        // Check gas or blowback air is still in the cell and the line: not yet process gas.
        const leftS = Math.ceil((e.lastFunctionCheckMs! + e.cfg.settleS * 1000 - ctx.nowMs) / 1000);
        worst = "function-check";
        reasons = [`settling after a function check: ${leftS} s of ${e.cfg.settleS} s left`];
      }
      if (worst === "ok") {
        if (v.sinceMs === null || v.state !== "ok") v.sinceMs = ctx.nowMs;
        if (v.state !== "ok" || v.reasons.length) {
          v.state = "ok";
          v.reasons = [];
        }
        continue;
      }
      if (v.sinceMs === null || v.state !== worst) v.sinceMs = ctx.nowMs;
      v.state = worst;
      v.reasons = reasons ?? bad.flatMap((m) => m.view.reasons.map((r) => `${m.signal}: ${r}`));
    }
  }

  /**
   * Why a signal cannot be trusted because of its analyser's health as of the last tick, or
   * null when its analysers (if any) are ok.
   */
  distrust(signalId: string): string | null {
    const list = this.bySignal.get(signalId);
    if (!list) return null;
    for (const { entry } of list) {
      const v = entry.view;
      if (v.state !== "ok") return `${signalId}: analyser ${v.id} ${v.state} (${v.reasons[0] ?? v.state})`;
    }
    return null;
  }

  /** The analyser's health state as of the last tick; null for an id not configured. */
  stateOf(analyserId: string): AnalyserHealthState | null {
    for (const e of this.entries) if (e.view.id === analyserId) return e.view.state;
    return null;
  }

  view(): { analysers: AnalyserView[] } {
    return { analysers: this.entries.map((e) => ({ ...e.view, reasons: [...e.view.reasons], signals: e.view.signals.map((s) => ({ ...s, reasons: [...s.reasons] })) })) };
  }
}
