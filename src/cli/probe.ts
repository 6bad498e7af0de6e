// `millwarden check --config FILE --connect [--wait S]`: connect to every configured source with
// the daemon's own (read-only) source code, listen for a while, and report per signal whether its
// topic or node delivered values and with which quality. Nothing is computed or stored.
import type { MillwardenConfig } from "../config/schema.js";
import type { Quality, Sample } from "../core/types.js";
import { MqttSource, type Source } from "../sources/mqtt.js";

export interface ProbeRow {
  signal: string;
  source: string;
  /** Topic, node id or Sparkplug metric the signal is read from. */
  address: string;
  samples: number;
  lastValue: number | null;
  lastQuality: Quality | null;
  lastReason: string | null;
}

export interface ProbeResult {
  rows: ProbeRow[];
  sources: { id: string; kind: string; connected: boolean; lastError: string | null }[];
}

function addressOf(s: MillwardenConfig["signals"][number]): string {
  if (s.nodeId) return s.nodeId;
  if (s.sparkplug) return `spBv1.0/${s.sparkplug.group}/${s.sparkplug.node}${s.sparkplug.device ? `/${s.sparkplug.device}` : ""} ${s.sparkplug.metric}`;
  return s.topic ?? "?";
}

/** Listen to every source for `waitMs`, then stop them; the wall clock only times the wait. */
export async function probeSources(cfg: MillwardenConfig, waitMs: number, log: (level: "info" | "warn" | "error", msg: string) => void, baseDir?: string): Promise<ProbeResult> {
  const rows = new Map<string, ProbeRow>(
    cfg.signals.map((s) => [s.id, { signal: s.id, source: s.source, address: addressOf(s), samples: 0, lastValue: null, lastQuality: null, lastReason: null }]),
  );
  const deps = { now: Date.now, log, baseDir };
  const opcua = cfg.sources.some((s) => s.kind === "opcua") ? await import("../sources/opcua.js") : null;
  const sources: Source[] = cfg.sources.map((s) => (s.kind === "mqtt" ? new MqttSource(s, cfg.signals, deps) : new opcua!.OpcUaSource(s, cfg.signals, deps)));
  const onSample = (s: Sample) => {
    const r = rows.get(s.signal);
    if (!r) return;
    r.samples++;
    r.lastValue = Number.isFinite(s.value) ? s.value : null;
    r.lastQuality = s.quality;
    r.lastReason = s.qualityReason ?? null;
  };
  try {
    for (const s of sources) await s.start(onSample);
    await new Promise((ok) => setTimeout(ok, waitMs));
  } finally {
    for (const s of sources) await s.stop().catch(() => undefined);
  }
  return {
    rows: [...rows.values()],
    sources: sources.map((s) => {
      const st = s.stats();
      return { id: st.id, kind: st.kind, connected: st.connected, lastError: st.lastError };
    }),
  };
}

/** The report: sources first, then one line per signal; `ok` false when a source or a signal delivered nothing good. */
export function renderProbe(r: ProbeResult, waitS: number): { text: string; ok: boolean } {
  const lines: string[] = [];
  let ok = true;
  for (const s of r.sources) {
    // A source that connected and then stopped reads "not connected" now: judge by what arrived.
    const got = r.rows.filter((x) => x.source === s.id && x.samples > 0).length;
    if (got === 0) ok = false;
    lines.push(`source ${s.id} (${s.kind}): ${got > 0 ? "delivered" : "nothing received"}${s.lastError ? `; last error: ${s.lastError}` : ""}`);
  }
  lines.push("");
  const w = Math.max(6, ...r.rows.map((x) => x.signal.length));
  for (const x of r.rows) {
    let what: string;
    if (x.samples === 0) {
      what = `NOTHING in ${waitS} s`;
      ok = false;
    } else {
      const v = x.lastValue === null ? "—" : String(Math.round(x.lastValue * 1000) / 1000);
      what = `${x.samples} value${x.samples === 1 ? "" : "s"}, last ${v} (${x.lastQuality}${x.lastReason ? `: ${x.lastReason}` : ""})`;
      if (x.lastQuality !== "good") ok = false;
    }
    lines.push(`${x.signal.padEnd(w)}  ${x.address}  ${what}`);
  }
  lines.push("", ok ? "every signal delivered good values" : "some signals delivered nothing or nothing good: see above");
  return { text: lines.join("\n"), ok };
}
