// Turns the core's state into deltas for the live view: only entries that
// changed since the last push, coalesced to at most one push per interval so a
// fast replay or simulation cannot flood the browsers.
import type { AdvisoryTransition, LiveMessage, PlantState } from "../core/types.js";

type Listener = (msg: LiveMessage) => void;
type Entry = { id: string };

export class ChangeFeed {
  private readonly listeners = new Set<Listener>();
  private readonly last = new Map<string, string>();
  private lastAdvisories = "";
  private pendingTransitions: AdvisoryTransition[] = [];
  private dirty = false;
  private timer: NodeJS.Timeout | null = null;

  constructor(
    private readonly snapshot: () => PlantState,
    private readonly intervalMs = 250,
  ) {}

  subscribe(l: Listener): () => void {
    this.listeners.add(l);
    return () => this.listeners.delete(l);
  }

  get clientCount(): number {
    return this.listeners.size;
  }

  /** Note that the state changed; `transitions` are passed on in the next push. */
  changed(transitions: AdvisoryTransition[] = []): void {
    this.dirty = true;
    if (transitions.length) this.pendingTransitions.push(...transitions);
  }

  start(): void {
    this.timer = setInterval(() => this.push(), this.intervalMs);
    this.timer.unref();
  }

  stop(): void {
    if (this.timer) clearInterval(this.timer);
    this.timer = null;
  }

  /** Build and send the delta now (also used by tests). */
  push(): void {
    if (!this.dirty) return;
    this.dirty = false;
    const state = this.snapshot();
    const msg: Extract<LiveMessage, { type: "delta" }> = { type: "delta", nowMs: state.nowMs };
    // Every list of entries with an id is patched entry by entry; the advisory list goes whole.
    for (const [section, list] of Object.entries(state)) {
      if (section === "advisories" || !Array.isArray(list)) continue;
      const changed: Entry[] = [];
      for (const entry of list as Entry[]) {
        const key = `${section}:${entry.id}`;
        const json = JSON.stringify(entry);
        if (this.last.get(key) !== json) {
          this.last.set(key, json);
          changed.push(entry);
        }
      }
      if (changed.length) (msg as Record<string, unknown>)[section] = changed;
    }
    const adv = JSON.stringify(state.advisories);
    if (adv !== this.lastAdvisories) {
      this.lastAdvisories = adv;
      msg.advisories = state.advisories;
    }
    if (this.pendingTransitions.length) {
      msg.transitions = this.pendingTransitions.slice(-200);
      this.pendingTransitions = [];
    }
    if (!this.listeners.size) return;
    for (const l of this.listeners) l(msg);
  }
}
