// Nuisance control after ISA-18.2 / EEMUA 191 (the figures are in the config's advisoryPolicy;
// the defaults are those of DESIGN.md §5, from memory):
//
//   chatter   one advisory annunciated chatterCount times within chatterWindowS: one "chatter"
//             event (the notifier sends that once instead of every raise) and the mark
//             "chattering"; it ends after five windows without an annunciation (our choice).
//   flood     more than floodCount annunciations at one operator position within floodWindowS
//             (raises of an advisory already marked chattering not counted):
//             one "flood-start" naming the first-out advisory (the earliest in the window);
//             "flood-end" once fewer than floodEndCount remain in the window.
//   standing  the condition present longer than standingS: one "standing" event per activation.
//
// An annunciation is a transition into "unack" from any other state (a raise, an escalation
// after acknowledgement, the end of a shelve or suppression with the condition present),
// except a re-alert, which asks again about the same activation.
// None of this hides anything from the screen: it only marks and summarises.
import type { AdvisoryPolicy } from "../config/schema.js";
import type { AdvisoryTransition, NuisanceEvent } from "../core/types.js";
import type { Advisory } from "./advisory.js";

/** Chatter ends after this many chatter windows without an annunciation (our choice). */
export const CHATTER_QUIET_WINDOWS = 5;

export function isAnnunciation(t: AdvisoryTransition): boolean {
  return t.to === "unack" && t.from !== "unack" && t.transition !== "re-alert";
}

interface Flood {
  active: boolean;
  firstOut: string | null;
  /** Annunciations in the window, oldest first. */
  recent: { atMs: number; advisoryId: string }[];
}

export class NuisanceControl {
  private readonly chatterTimes = new Map<string, number[]>();
  private readonly floods = new Map<string, Flood>();

  constructor(private readonly policy: AdvisoryPolicy) {}

  /** Whether a position is in flood now. */
  inFlood(position: string): boolean {
    return this.floods.get(position)?.active ?? false;
  }

  /** Call for every transition, in order. */
  onTransition(t: AdvisoryTransition, a: Advisory): NuisanceEvent[] {
    if (!isAnnunciation(t)) return [];
    const out: NuisanceEvent[] = [];
    const p = this.policy;

    const times = this.chatterTimes.get(a.id) ?? [];
    times.push(t.atMs);
    while (times.length && times[0]! <= t.atMs - p.chatterWindowS * 1000) times.shift();
    this.chatterTimes.set(a.id, times);
    if (!a.chattering && times.length >= p.chatterCount) {
      a.chattering = true;
      out.push({
        kind: "nuisance",
        atMs: t.atMs,
        type: "chatter",
        position: a.position,
        advisoryId: a.id,
        count: times.length,
        why: `${a.id} annunciated ${times.length} times within ${p.chatterWindowS} s: marked chattering, notified once`,
      });
    }

    // Once an advisory is marked chattering, chatter control speaks for it: its further raises
    // do not count toward a flood (one flickering reading must not flood a position by itself).
    // The raise that made it chattering still counts.
    if (a.chattering && out.length === 0) return out;
    const f = this.flood(a.position);
    f.recent.push({ atMs: t.atMs, advisoryId: a.id });
    this.trim(f, t.atMs);
    if (!f.active && f.recent.length > p.floodCount) {
      f.active = true;
      f.firstOut = f.recent[0]!.advisoryId;
      out.push({
        kind: "nuisance",
        atMs: t.atMs,
        type: "flood-start",
        position: a.position,
        advisoryId: f.firstOut,
        count: f.recent.length,
        why: `${f.recent.length} advisories within ${p.floodWindowS / 60} min at ${a.position}; first out: ${f.firstOut}`,
      });
    }
    return out;
  }

  /** At every tick: floods and chatter that ended, standing advisories. */
  tick(nowMs: number, advisories: readonly Advisory[]): NuisanceEvent[] {
    const out: NuisanceEvent[] = [];
    const p = this.policy;
    for (const [position, f] of this.floods) {
      this.trim(f, nowMs);
      if (f.active && f.recent.length < p.floodEndCount) {
        f.active = false;
        out.push({
          kind: "nuisance",
          atMs: nowMs,
          type: "flood-end",
          position,
          advisoryId: f.firstOut,
          count: f.recent.length,
          why: `fewer than ${p.floodEndCount} advisories within ${p.floodWindowS / 60} min at ${position}: flood over`,
        });
        f.firstOut = null;
      }
    }
    for (const a of advisories) {
      a.firstOut = this.floods.get(a.position)?.firstOut === a.id;
      if (a.chattering) {
        const times = this.chatterTimes.get(a.id);
        const last = times?.[times.length - 1];
        if (last === undefined || nowMs - last >= CHATTER_QUIET_WINDOWS * p.chatterWindowS * 1000) {
          a.chattering = false;
          out.push({
            kind: "nuisance",
            atMs: nowMs,
            type: "chatter-end",
            position: a.position,
            advisoryId: a.id,
            count: 0,
            why: `${a.id} quiet for ${CHATTER_QUIET_WINDOWS * p.chatterWindowS} s: no longer chattering`,
          });
        }
      }
      if (!a.standing && a.activeSinceMs !== null && nowMs - a.activeSinceMs > p.standingS * 1000) {
        a.standing = true;
        out.push({
          kind: "nuisance",
          atMs: nowMs,
          type: "standing",
          position: a.position,
          advisoryId: a.id,
          count: 1,
          why: `${a.id} active for more than ${p.standingS / 3600} h: standing advisory, review it`,
        });
      }
    }
    return out;
  }

  private flood(position: string): Flood {
    let f = this.floods.get(position);
    if (!f) {
      f = { active: false, firstOut: null, recent: [] };
      this.floods.set(position, f);
    }
    return f;
  }

  private trim(f: Flood, nowMs: number): void {
    const from = nowMs - this.policy.floodWindowS * 1000;
    let k = 0;
    while (k < f.recent.length && f.recent[k]!.atMs <= from) k++;
    if (k) f.recent.splice(0, k);
  }
}
