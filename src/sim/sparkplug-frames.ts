// The simulated plant as a Sparkplug B edge node of its own (Eclipse Sparkplug 3.0, topic
// namespace spBv1.0): one node, every tag a Double metric named after the tag, with an alias.
//
//   connect with the will   spBv1.0/<group>/NDEATH/<node>   { bdSeq }
//   after each connection   spBv1.0/<group>/NBIRTH/<node>   seq 0, bdSeq, every metric by name and alias
//   each frame              spBv1.0/<group>/NDATA/<node>    seq + 1 (mod 256), every metric by alias
//
// bdSeq counts the node's sessions (0..255), so a host can tell a stale will from the current one.
import sparkplug from "sparkplug-payload";
import type { UMetric } from "sparkplug-payload/lib/sparkplugbpayload.js";
import { signalSchema, type MillwardenConfig } from "../config/schema.js";
import type { SimFrame } from "./plant.js";

const codec = sparkplug.get("spBv1.0")!;

export interface SparkplugNodeId {
  group: string;
  node: string;
}

export class SparkplugEdge {
  private seq = 0;
  private bdSeq = -1;
  private readonly alias = new Map<string, number>();

  constructor(readonly id: SparkplugNodeId) {
    if (!/^[^/#+]+$/.test(id.group) || !/^[^/#+]+$/.test(id.node)) {
      throw new Error(`simulator: sparkplug group and node: expected names without / # +, found ${JSON.stringify(id)}`);
    }
  }

  topic(type: "NBIRTH" | "NDEATH" | "NDATA"): string {
    return `spBv1.0/${this.id.group}/${type}/${this.id.node}`;
  }

  /** A new session: the will to register with the broker for it. */
  nextSession(timeMs: number): { topic: string; payload: Buffer } {
    this.bdSeq = (this.bdSeq + 1) % 256;
    return { topic: this.topic("NDEATH"), payload: Buffer.from(codec.encodePayload({ timestamp: timeMs, metrics: [{ name: "bdSeq", type: "UInt64", value: this.bdSeq }] })) };
  }

  /** The birth of the session, with the frame's values. */
  birth(frame: SimFrame): { topic: string; payload: Buffer } {
    this.seq = 0;
    const metrics: UMetric[] = [
      { name: "bdSeq", type: "UInt64", value: this.bdSeq },
      ...frame.values.map(({ tag, value }): UMetric => {
        if (!this.alias.has(tag)) this.alias.set(tag, this.alias.size + 1);
        return { name: tag, alias: this.alias.get(tag)!, type: "Double", value, timestamp: frame.tMs };
      }),
    ];
    return { topic: this.topic("NBIRTH"), payload: Buffer.from(codec.encodePayload({ timestamp: frame.tMs, seq: 0, metrics })) };
  }

  /** One frame as NDATA, every metric by alias. */
  data(frame: SimFrame): { topic: string; payload: Buffer } {
    this.seq = (this.seq + 1) % 256;
    const metrics = frame.values.map(({ tag, value }): UMetric => {
      const alias = this.alias.get(tag);
      return alias === undefined ? { name: tag, type: "Double", value, timestamp: frame.tMs } : { alias, type: "Double", value, timestamp: frame.tMs };
    });
    return { topic: this.topic("NDATA"), payload: Buffer.from(codec.encodePayload({ timestamp: frame.tMs, seq: this.seq, metrics })) };
  }
}

/**
 * A config whose MQTT signals read the simulator's tags (topic ".../<tag>") turned into one that
 * reads the simulator's Sparkplug edge node instead: each such signal maps the metric named after
 * its tag. Each changed signal is validated as a config file's would be.
 */
export function asSparkplugConfig(cfg: MillwardenConfig, id: SparkplugNodeId = { group: "cg2", node: "sim-cg2" }): MillwardenConfig {
  const mqttIds = new Set(cfg.sources.filter((s) => s.kind === "mqtt").map((s) => s.id));
  return {
    ...cfg,
    sources: cfg.sources.map((s) => (s.kind === "mqtt" ? { ...s, payload: { ...s.payload, format: "sparkplug" as const } } : s)),
    signals: cfg.signals.map((s) => {
      if (!mqttIds.has(s.source) || !s.topic) return s;
      const { topic, valuePath: _valuePath, ...rest } = s;
      return signalSchema.parse({ ...rest, sparkplug: { group: id.group, node: id.node, metric: topic.slice(topic.lastIndexOf("/") + 1) } });
    }),
  };
}
