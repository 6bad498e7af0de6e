// The replay's progress bar on stderr, only when stderr is a terminal: percent of the input
// (bytes of a CSV file, data time of a historian), samples so far and samples per second.
// Redrawn at most four times a second; the caller asks often and cheaply (`due()`).
// Wall-clock time is read here for the rate only; nothing of it reaches stdout or the events.
import { performance } from "node:perf_hooks";

const REDRAW_MS = 250;
const BAR_CHARS = 30;

export interface ProgressSink {
  write(text: string): void;
}

export class Progress {
  private readonly startMs = performance.now();
  private lastDrawMs = Number.NEGATIVE_INFINITY;
  private drawn = false;

  constructor(
    private readonly sink: ProgressSink,
    readonly enabled: boolean,
  ) {}

  /** True when a redraw is due (cheap enough to call every few thousand samples). */
  due(): boolean {
    return this.enabled && performance.now() - this.lastDrawMs >= REDRAW_MS;
  }

  draw(fraction: number | null, samples: number, dataTimeMs: number | null): void {
    if (!this.enabled) return;
    const now = performance.now();
    this.lastDrawMs = now;
    const s = (now - this.startMs) / 1000;
    const rate = s > 0 ? samples / s : 0;
    const bar =
      fraction === null
        ? "".padEnd(BAR_CHARS, ".")
        : "#".repeat(Math.round(fraction * BAR_CHARS)).padEnd(BAR_CHARS, ".");
    const percent = fraction === null ? "   ?  %" : `${(100 * fraction).toFixed(1).padStart(5)} %`;
    const at = dataTimeMs === null ? "" : `  data ${new Date(dataTimeMs).toISOString().slice(0, 19)}Z`;
    this.sink.write(`\r[${bar}] ${percent}  ${groupDigits(samples)} samples  ${groupDigits(Math.round(rate))} samples/s${at}\x1b[K`);
    this.drawn = true;
  }

  /** Clears the bar's line; returns the seconds since the start. */
  done(): number {
    if (this.drawn) this.sink.write("\r\x1b[K");
    return (performance.now() - this.startMs) / 1000;
  }
}

/** 1234567 → "1,234,567" (fixed, not the locale's). */
export function groupDigits(n: number): string {
  const s = String(Math.trunc(Math.abs(n)));
  return (n < 0 ? "-" : "") + s.replace(/\B(?=(\d{3})+(?!\d))/g, ",");
}
