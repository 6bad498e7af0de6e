// One config replayed over a stream of samples, exactly as the daemon runs the core on the
// data clock (src/daemon/daemon.ts): before each sample, a tick for every whole second of the
// data's time passed since the last one (DataClock), then the sample, with its receive time
// set to its source time. No tick follows the last sample: live, the next one would come a
// second later, after the data has ended.
//
// Keeps the events a replay reports (advisory transitions, nuisance events, state changes),
// never the derived values (a day of them is millions). No I/O and no clock of its own.
import type { MillwardenConfig } from "../config/schema.js";
import { DataClock, Engine } from "../core/engine.js";
import type { Sample } from "../core/types.js";
import type { ReplayEvent } from "./summary.js";

export interface ReplayCounts {
  /** Samples handed to the core. */
  samples: number;
  accepted: number;
  /** Refused by the core: a signal the config does not have, not newer than the signal's last sample. */
  unknownSignal: number;
  duplicate: number;
  outOfOrder: number;
  /** Samples older than the last tick: the input is not in time order across signals. */
  late: number;
  ticks: number;
  /** Seconds not ticked because a gap in the data was longer than DataClock's limit (1 h). */
  skippedTicks: number;
}

/** Distinct unknown signal ids remembered for the report (the count goes on beyond). */
const MAX_UNKNOWN_IDS = 100;

export class Replay {
  readonly engine: Engine;
  private readonly clock = new DataClock();
  readonly events: ReplayEvent[] = [];
  readonly counts: ReplayCounts = { samples: 0, accepted: 0, unknownSignal: 0, duplicate: 0, outOfOrder: 0, late: 0, ticks: 0, skippedTicks: 0 };
  /** Unknown signal ids and how often each came (at most MAX_UNKNOWN_IDS ids). */
  readonly unknownSignals = new Map<string, number>();
  /** Earliest and latest sample time handed in (the replay's span). */
  firstSampleMs: number | null = null;
  lastSampleMs: number | null = null;
  lastTickMs: number | null = null;

  /** `onEvent` sees each kept event as the core emits it (for streaming them to a file). */
  constructor(
    readonly cfg: MillwardenConfig,
    private readonly onEvent?: (e: ReplayEvent) => void,
  ) {
    this.engine = new Engine(cfg);
  }

  push(s: Sample): void {
    const t = s.sourceTimeMs;
    if (this.firstSampleMs === null || t < this.firstSampleMs) this.firstSampleMs = t;
    if (this.lastSampleMs === null || t > this.lastSampleMs) this.lastSampleMs = t;
    const due = this.clock.due(t);
    if (due.length > 0) {
      const prev = this.lastTickMs;
      const first = due[0]!;
      if (prev !== null && first - prev > 1000) this.counts.skippedTicks += (first - prev) / 1000 - 1;
      for (const tickMs of due) this.tick(tickMs);
    } else if (this.lastTickMs === null) {
      // DataClock's first call sets its start (the sample's whole second) without a tick.
      this.lastTickMs = Math.floor(t / 1000) * 1000;
    } else if (t < this.lastTickMs) this.counts.late++;
    this.counts.samples++;
    const outcome = this.engine.ingest(s.receiveTimeMs === t ? s : { ...s, receiveTimeMs: t });
    if (outcome === "accepted") this.counts.accepted++;
    else if (outcome === "duplicate") this.counts.duplicate++;
    else if (outcome === "out-of-order") this.counts.outOfOrder++;
    else {
      this.counts.unknownSignal++;
      const n = this.unknownSignals.get(s.signal);
      if (n !== undefined) this.unknownSignals.set(s.signal, n + 1);
      else if (this.unknownSignals.size < MAX_UNKNOWN_IDS) this.unknownSignals.set(s.signal, 1);
    }
  }

  private tick(nowMs: number): void {
    this.lastTickMs = nowMs;
    this.counts.ticks++;
    for (const e of this.engine.tick(nowMs)) {
      if (e.kind === "derived") continue;
      this.events.push(e);
      this.onEvent?.(e);
    }
  }
}
