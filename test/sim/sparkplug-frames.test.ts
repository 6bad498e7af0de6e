// The simulator's Sparkplug B edge node, decoded with the reference codec of the Eclipse Tahu
// project as published on npm (sparkplug-payload), against the Sparkplug 3.0 rules it follows:
// NBIRTH carries seq 0, bdSeq and every metric with name and alias; NDATA counts seq on mod 256
// and refers to metrics by alias; the will (NDEATH) carries the session's bdSeq.
import sparkplug from "sparkplug-payload";
import { describe, expect, it } from "vitest";
import { SparkplugEdge, asSparkplugConfig } from "../../src/sim/sparkplug-frames.js";
import { loadConfig } from "../../src/config/load.js";

const codec = sparkplug.get("spBv1.0")!;
const num = (v: unknown) => (typeof v === "number" ? v : Number((v as { toNumber(): number }).toNumber()));
const frame = (tMs: number, k: number) => ({ tMs, values: [{ tag: "VM2-TT-111", value: 88 + k }, { tag: "BF2-AT-214", value: 30 + k }] });

describe("simulator as a Sparkplug B edge node", () => {
  it("will, birth and data follow the seq and bdSeq rules", () => {
    const e = new SparkplugEdge({ group: "cg2", node: "sim-cg2" });
    const will = e.nextSession(1000);
    expect(will.topic).toBe("spBv1.0/cg2/NDEATH/sim-cg2");
    expect(num(codec.decodePayload(will.payload).metrics![0]!.value)).toBe(0);
    const b = e.birth(frame(2000, 0));
    expect(b.topic).toBe("spBv1.0/cg2/NBIRTH/sim-cg2");
    const bp = codec.decodePayload(b.payload);
    expect(num(bp.seq)).toBe(0);
    expect(bp.metrics!.map((m) => [m.name, m.alias === undefined || m.alias === null ? null : num(m.alias), m.value])).toEqual([
      ["bdSeq", null, expect.anything()],
      ["VM2-TT-111", 1, 88],
      ["BF2-AT-214", 2, 30],
    ]);
    let last = 0;
    for (let k = 1; k <= 300; k++) {
      const d = codec.decodePayload(e.data(frame(2000 + k * 1000, k)).payload);
      const seq = num(d.seq);
      expect(seq).toBe(k % 256);
      last = seq;
      expect(d.metrics!.map((m) => [m.name ?? null, num(m.alias), m.value])).toEqual([
        [null, 1, 88 + k],
        [null, 2, 30 + k],
      ]);
    }
    expect(last).toBe(300 % 256);
    // A new session: bdSeq + 1, and the birth starts seq at 0 again.
    expect(num(codec.decodePayload(e.nextSession(0).payload).metrics![0]!.value)).toBe(1);
    expect(num(codec.decodePayload(e.birth(frame(0, 0)).payload).seq)).toBe(0);
  });

  it("the demo config read over Sparkplug maps every simulator tag to a metric of the node", () => {
    const cfg = asSparkplugConfig(loadConfig("config/demo.yaml"));
    expect(cfg.sources[0]).toMatchObject({ kind: "mqtt", payload: { format: "sparkplug" } });
    const tt = cfg.signals.find((s) => s.id === "vm2.outlet.temp")!;
    expect(tt.sparkplug).toEqual({ group: "cg2", node: "sim-cg2", metric: "VM2-TT-111" });
    expect(tt.topic).toBe("spBv1.0/cg2/NDATA/sim-cg2");
  });
});
