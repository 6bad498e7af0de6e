// What the box publishes to the site's messaging broker, and under which topics (pure: no I/O,
// no clock; times come in as arguments). The topic tree, under root = <prefix>/<box>:
//
//   <root>/status                 retained  liveness: {"state":"online"|"offline", ...}; the Last Will says offline
//   <root>/derived/<key>          -         a derived value: on change (at most every minIntervalS) and every everyS
//   <root>/state/<key>            retained  phase.<unit>, inerting.<unit>, analyser.<id>: each change
//   <root>/advisory/<id>          retained  the advisory's current view (state "normal" once off the screen)
//   <root>/transition/<id>        -         each advisory transition (kept longest in the store-and-forward queue)
//   <root>/nuisance               -         chatter, flood, standing events
//
// Every body is JSON with "advisoryOnly": the box never writes to the control system, and
// nothing here is a command topic.
import type { AdvisoryView, CoreEvent, DerivedValue } from "../core/types.js";
import { ADVISORY_ONLY } from "../core/types.js";
import type { UplinkMessage } from "../store/uplink-queue.js";

export interface PlanOptions {
  /** <prefix>/<box> */
  root: string;
  box: string;
  qos: 0 | 1;
  retainStates: boolean;
  derived: { minIntervalS: number; everyS: number; include?: readonly string[] | undefined };
}

export interface BoxInfo {
  site: string;
  plant: string;
  units: { id: string; name: string; kind: string }[];
}

export type LivenessState = "online" | "offline";

/** The body of <root>/status. */
export interface StatusBody extends BoxInfo {
  state: LivenessState;
  box: string;
  /** Box clock time of the message (the will carries the time of the connection it was set on). */
  atMs: number;
  advisoryOnly: string;
}

const json = (v: unknown) => Buffer.from(JSON.stringify(v));

/** A derived value's body: +Infinity (a time to a limit not approaching) travels as notApproaching. */
export function derivedBody(d: DerivedValue): Record<string, unknown> {
  const notApproaching = d.value === Number.POSITIVE_INFINITY;
  return {
    key: d.key,
    value: notApproaching || d.value === null || !Number.isFinite(d.value) ? null : d.value,
    status: d.status,
    ...(notApproaching ? { notApproaching: true } : {}),
    ...(d.reason !== undefined ? { reason: d.reason } : {}),
    atMs: d.atMs,
  };
}

/** The advisory fields a fleet view needs (the view without its long texts). */
export function advisoryBody(v: AdvisoryView): Record<string, unknown> {
  return {
    id: v.id,
    state: v.state,
    tier: v.tier,
    unitId: v.unitId,
    title: v.title,
    quantity: v.quantity,
    value: v.value !== null && Number.isFinite(v.value) ? v.value : null,
    unit: v.unit,
    limit: v.limit,
    raisedAtMs: v.raisedAtMs,
    lastChangeMs: v.lastChangeMs,
    ackedBy: v.ackedBy,
    shelvedUntilMs: v.shelvedUntilMs,
    suppressedBy: v.suppressedBy,
    advisoryOnly: ADVISORY_ONLY,
  };
}

export class RepublishPlan {
  private readonly lastDerived = new Map<string, { value: number | null; status: string; atMs: number }>();

  constructor(private readonly o: PlanOptions) {}

  statusTopic(): string {
    return `${this.o.root}/status`;
  }

  status(state: LivenessState, info: BoxInfo, atMs: number): UplinkMessage {
    const body: StatusBody = { state, box: this.o.box, ...info, atMs, advisoryOnly: ADVISORY_ONLY };
    return { topic: this.statusTopic(), body: json(body), qos: this.o.qos, retain: true, keepLast: false };
  }

  private wantsDerived(d: DerivedValue): boolean {
    const inc = this.o.derived.include;
    if (inc && !inc.some((p) => d.key.startsWith(p))) return false;
    const last = this.lastDerived.get(d.key);
    if (!last) return true;
    const sinceMs = d.atMs - last.atMs;
    if (sinceMs >= this.o.derived.everyS * 1000) return true;
    const changed = last.status !== d.status || !Object.is(last.value, d.value);
    return changed && sinceMs >= this.o.derived.minIntervalS * 1000;
  }

  /** The messages for one batch of core events; `advisory(id)` is the advisory's view after them (undefined once off the screen). */
  messages(events: readonly CoreEvent[], advisory: (id: string) => AdvisoryView | undefined): UplinkMessage[] {
    const { root, qos } = this.o;
    const retain = this.o.retainStates;
    const out: UplinkMessage[] = [];
    const touched: string[] = [];
    const lastTransition = new Map<string, { tier: string; atMs: number }>();
    for (const e of events) {
      if (e.kind === "derived") {
        if (!this.wantsDerived(e)) continue;
        this.lastDerived.set(e.key, { value: e.value, status: e.status, atMs: e.atMs });
        out.push({ topic: `${root}/derived/${e.key}`, body: json(derivedBody(e)), qos, retain: false, keepLast: false });
      } else if (e.kind === "state") {
        out.push({ topic: `${root}/state/${e.key}`, body: json({ key: e.key, value: e.value, atMs: e.atMs }), qos, retain, keepLast: false });
      } else if (e.kind === "advisory") {
        out.push({ topic: `${root}/transition/${e.advisoryId}`, body: json({ ...e, value: e.value !== null && Number.isFinite(e.value) ? e.value : null, advisoryOnly: ADVISORY_ONLY }), qos, retain: false, keepLast: true });
        if (!touched.includes(e.advisoryId)) touched.push(e.advisoryId);
        lastTransition.set(e.advisoryId, { tier: e.tier, atMs: e.atMs });
      } else {
        out.push({ topic: `${root}/nuisance`, body: json({ ...e, advisoryOnly: ADVISORY_ONLY }), qos, retain: false, keepLast: false });
      }
    }
    for (const id of touched) {
      const v = advisory(id);
      const t = lastTransition.get(id)!;
      const body = v ? advisoryBody(v) : { id, state: "normal", tier: t.tier, lastChangeMs: t.atMs, advisoryOnly: ADVISORY_ONLY };
      out.push({ topic: `${root}/advisory/${id}`, body: json(body), qos, retain, keepLast: true });
    }
    return out;
  }
}
