// One log line per key per minute: a source that receives a bad message every second
// must not flood the log, yet every refusal is still counted in the source's stats.
import type { SourceDeps } from "./mqtt.js";

export const LOG_EVERY_MS = 60_000;

export class RateLimitedLog {
  private readonly last = new Map<string, number>();

  constructor(private readonly deps: SourceDeps) {}

  log(key: string, level: "warn" | "error", msg: string): void {
    const now = this.deps.now();
    const prev = this.last.get(key);
    if (prev !== undefined && now - prev < LOG_EVERY_MS) return;
    this.last.set(key, now);
    this.deps.log(level, msg);
  }
}
