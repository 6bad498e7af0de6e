// Who is on call: a weekly rotation in the site's time zone, with stand-ins (overrides).
// Pure: the instant is an argument.
//
// Week k of a rotation begins when local time first reads the start's local date and time plus
// 7·k days (zone.wallToUtc), so a handover at Monday 07:00 stays at 07:00 local across the
// daylight-saving changes, and a week spanning one is an hour shorter or longer. Before the
// start the rotation runs backwards (week −1 is the last week of the list).
import type { Role, RosterConfig } from "../config/sections/notifications.js";
import { parseSiteTime, wallMs, wallToUtc } from "./zone.js";

const WEEK_MS = 7 * 86_400_000;

export type OnCall = Record<Role, string | null>;

interface Override {
  fromMs: number;
  toMs: number;
  role: Role;
  person: string;
}

export class Roster {
  readonly id: string;
  private readonly startWall: number;
  private readonly overrides: Override[];

  constructor(
    private readonly cfg: RosterConfig,
    private readonly zone: string,
  ) {
    this.id = cfg.id;
    this.startWall = wallMs(zone, parseSiteTime(cfg.rotation.startsAt, zone));
    this.overrides = cfg.overrides.map((o) => ({ fromMs: parseSiteTime(o.from, zone), toMs: parseSiteTime(o.to, zone), role: o.role, person: o.person }));
  }

  /** The instant week k begins. */
  handoverMs(k: number): number {
    return wallToUtc(this.zone, this.startWall + k * WEEK_MS);
  }

  /** Index of the week (since the start, may be negative) that `nowMs` lies in. */
  weekIndex(nowMs: number): number {
    let k = Math.floor((wallMs(this.zone, nowMs) - this.startWall) / WEEK_MS);
    while (this.handoverMs(k) > nowMs) k--;
    while (this.handoverMs(k + 1) <= nowMs) k++;
    return k;
  }

  /** Primary, secondary and supervisor at `nowMs`, stand-ins applied (null: nobody). */
  onCall(nowMs: number): OnCall {
    const weeks = this.cfg.rotation.weeks;
    const n = weeks.length;
    const w = weeks[((this.weekIndex(nowMs) % n) + n) % n]!;
    const out: OnCall = { primary: w.primary, secondary: w.secondary ?? null, supervisor: this.cfg.supervisor ?? null };
    for (const o of this.overrides) if (o.fromMs <= nowMs && nowMs < o.toMs) out[o.role] = o.person;
    return out;
  }
}
