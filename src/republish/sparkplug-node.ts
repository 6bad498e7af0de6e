// The box as a Sparkplug B edge node of its own (Eclipse Sparkplug 3.0, namespace spBv1.0),
// pure: times are arguments. One metric per derived key (Double), per state key (String) and two
// per rule (advisory state and tier, String), each with an alias from the birth on.
//
//   connect with the will   spBv1.0/<group>/NDEATH/<node>   { bdSeq }           (the will of this session)
//   after each connection   spBv1.0/<group>/NBIRTH/<node>   seq 0, bdSeq, every metric by name, alias and current value
//   each batch of events    spBv1.0/<group>/NDATA/<node>    seq + 1 (mod 256), the changed metrics by alias
//
// Never a command: the node subscribes to no NCMD, so no host can ask anything of the box (not
// even a rebirth; it is born again at every connection). NDATA are not stored while the broker is
// away: a Sparkplug host rebuilds its picture from the next NBIRTH, which carries every current value.
import sparkplug from "sparkplug-payload";
import type { UMetric } from "sparkplug-payload/lib/sparkplugbpayload.js";
import type { AdvisoryView, CoreEvent } from "../core/types.js";

const codec = sparkplug.get("spBv1.0")!;

export interface SparkplugMetricSpec {
  name: string;
  type: "Double" | "String";
}

/** The metrics of a config: derived/<key>, state/<key>, advisory/<rule>/state and /tier. */
export function sparkplugMetrics(derivedKeys: readonly string[], stateKeys: readonly string[], ruleIds: readonly string[]): SparkplugMetricSpec[] {
  return [
    ...derivedKeys.map((k) => ({ name: `derived/${k}`, type: "Double" as const })),
    ...stateKeys.map((k) => ({ name: `state/${k}`, type: "String" as const })),
    ...ruleIds.flatMap((r) => [
      { name: `advisory/${r}/state`, type: "String" as const },
      { name: `advisory/${r}/tier`, type: "String" as const },
    ]),
  ];
}

interface Current {
  spec: SparkplugMetricSpec;
  alias: number;
  value: number | string | null;
  atMs: number;
  sentAtMs: number | null;
  sentValue: number | string | null;
}

export interface SparkplugMessage {
  topic: string;
  payload: Buffer;
}

export class SparkplugNodePlan {
  private seq = 0;
  private bdSeq = -1;
  private readonly metrics = new Map<string, Current>();

  constructor(
    readonly group: string,
    readonly node: string,
    specs: readonly SparkplugMetricSpec[],
    /** A derived value goes out at most this often (states and advisories at each change). */
    private readonly minIntervalS: number,
  ) {
    specs.forEach((spec, i) => this.metrics.set(spec.name, { spec, alias: i + 1, value: null, atMs: 0, sentAtMs: null, sentValue: null }));
  }

  topic(type: "NBIRTH" | "NDEATH" | "NDATA"): string {
    return `spBv1.0/${this.group}/${type}/${this.node}`;
  }

  /** A new MQTT session: its will (NDEATH with the session's bdSeq, 0..255). */
  nextSession(atMs: number): SparkplugMessage {
    this.bdSeq = (this.bdSeq + 1) % 256;
    return this.death(atMs);
  }

  /** The current session's death certificate (also published on a clean stop). */
  death(atMs: number): SparkplugMessage {
    return { topic: this.topic("NDEATH"), payload: Buffer.from(codec.encodePayload({ timestamp: atMs, metrics: [{ name: "bdSeq", type: "UInt64", value: this.bdSeq }] })) };
  }

  private metric(c: Current, byName: boolean): UMetric {
    const base = byName ? { name: c.spec.name, alias: c.alias } : { alias: c.alias };
    return { ...base, type: c.spec.type, value: c.value, timestamp: c.atMs || undefined } as UMetric;
  }

  /** NBIRTH: seq 0, bdSeq, every metric with name, alias and its current value. */
  birth(atMs: number): SparkplugMessage {
    this.seq = 0;
    const metrics: UMetric[] = [{ name: "bdSeq", type: "UInt64", value: this.bdSeq }];
    for (const c of this.metrics.values()) {
      metrics.push(this.metric(c, true));
      c.sentAtMs = c.atMs;
      c.sentValue = c.value;
    }
    return { topic: this.topic("NBIRTH"), payload: Buffer.from(codec.encodePayload({ timestamp: atMs, seq: 0, metrics })) };
  }

  private set(name: string, value: number | string | null, atMs: number): void {
    const c = this.metrics.get(name);
    if (!c) return;
    c.value = value;
    c.atMs = atMs;
  }

  /** Take a batch of core events; the NDATA with what changed (null when nothing did or `send` is false). */
  data(events: readonly CoreEvent[], advisory: (id: string) => AdvisoryView | undefined, send: boolean): SparkplugMessage | null {
    let atMs = 0;
    const touched = new Set<string>();
    for (const e of events) {
      atMs = Math.max(atMs, e.atMs);
      if (e.kind === "derived") {
        this.set(`derived/${e.key}`, e.value, e.atMs);
        touched.add(`derived/${e.key}`);
      } else if (e.kind === "state") {
        this.set(`state/${e.key}`, e.value, e.atMs);
        touched.add(`state/${e.key}`);
      } else if (e.kind === "advisory") {
        const v = advisory(e.advisoryId);
        for (const [f, val] of [
          ["state", v?.state ?? e.to],
          ["tier", v?.tier ?? e.tier],
        ] as const) {
          this.set(`advisory/${e.ruleId}/${f}`, val, e.atMs);
          touched.add(`advisory/${e.ruleId}/${f}`);
        }
      }
    }
    if (!send) return null;
    const out: UMetric[] = [];
    for (const name of touched) {
      const c = this.metrics.get(name);
      if (!c || Object.is(c.value, c.sentValue)) continue;
      if (c.spec.type === "Double" && c.sentAtMs !== null && c.atMs - c.sentAtMs < this.minIntervalS * 1000) continue;
      out.push(this.metric(c, false));
      c.sentAtMs = c.atMs;
      c.sentValue = c.value;
    }
    if (out.length === 0) return null;
    this.seq = (this.seq + 1) % 256;
    return { topic: this.topic("NDATA"), payload: Buffer.from(codec.encodePayload({ timestamp: atMs, seq: this.seq, metrics: out })) };
  }
}
