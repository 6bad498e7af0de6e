// The `republish:` section: what the box publishes to the SITE's messaging broker (never the
// control system), and its cross-check: no topic of ours may be one a plant signal is read from.
import { z } from "zod";
import type { MillwardenConfig } from "../schema.js";
import type { CheckContext } from "./context.js";
import { mqttTls } from "./common.js";

/** One topic level: no / + # and no NUL. */
const level = z.string().regex(/^[^/+#]+$/, "expected one MQTT topic level, without / + or #").refine((l) => !l.includes("\u0000"), { message: "expected one MQTT topic level, without a NUL character" });

export const republishSchema = z
  .strictObject({
    url: z.string().regex(/^(mqtt|mqtts|ws|wss):\/\//, "expected an mqtt://, mqtts://, ws:// or wss:// URL"),
    /** 4: MQTT 3.1.1, 5: MQTT 5. */
    protocolVersion: z.union([z.literal(4), z.literal(5)]).default(4),
    /** Default: millwarden-<box>. */
    clientId: z.string().min(1).optional(),
    username: z.string().optional(),
    /** Read from this environment variable, never written in the file. */
    passwordEnv: z.string().optional(),
    tls: mqttTls.optional(),
    /** First levels of every topic we publish; may hold several levels (e.g. tarnholm/millwarden). */
    prefix: z
      .string()
      .min(1)
      .regex(/^[^+#]+$/, "expected topic levels without + or #")
      .refine((p) => !p.includes("\u0000") && !p.startsWith("/") && !p.endsWith("/") && !p.split("/").includes("") && !p.startsWith("$"), { message: "expected topic levels separated by single / (no leading or trailing /, not starting with $)" })
      .default("millwarden"),
    /** This box's id: the topic level after the prefix, unique on the site. */
    box: level,
    qos: z.union([z.literal(0), z.literal(1)]).default(1),
    /** Retain states, advisory views and the liveness topic, so a newcomer sees them at once. */
    retainStates: z.boolean().default(true),
    /** A derived value is published when it changes, at most every minIntervalS, and unchanged every everyS. */
    derived: z
      .strictObject({
        minIntervalS: z.number().nonnegative().default(5),
        everyS: z.number().positive().default(60),
        /** Only these keys (prefixes of derived keys, e.g. "dewpoint." or "o2.vm2."); all when absent. */
        include: z.array(z.string().min(1)).min(1).optional(),
      })
      .default({ minIntervalS: 5, everyS: 60 }),
    /** The liveness topic is refreshed this often (its age tells a fleet view the box is alive). */
    heartbeatS: z.number().positive().default(30),
    /**
     * Also as a Sparkplug B edge node of its own (a second MQTT session with its own will):
     * NBIRTH with every metric and alias, NDATA on change, NDEATH with bdSeq as the will.
     */
    sparkplug: z.strictObject({ group: level, node: level }).optional(),
    /** Store-and-forward: at most this many messages wait in the historian while the broker is away. */
    queueMaxMessages: z.number().int().min(10).default(100_000),
  })
  .refine((s) => s.tls === undefined || /^(mqtts|wss):\/\//.test(s.url), { message: "tls: needs an mqtts:// or wss:// url", path: ["url"] })
  .refine((s) => s.passwordEnv === undefined || s.username !== undefined, { message: "passwordEnv needs a username (MQTT sends a password only with a user name)", path: ["username"] });

export type RepublishConfig = z.infer<typeof republishSchema>;

/**
 * The `opcuaServer:` section: derived values, states and advisory states served read only over
 * OPC UA (src/republish/opcua-server.ts). Client certificates are trusted explicitly (copied
 * into <pkiFolder>/server/trusted/certs) unless securityModes is [None].
 */
export const opcuaServerSchema = z.strictObject({
  host: z.string().min(1).default("127.0.0.1"),
  port: z.number().int().min(0).max(65535).default(4841),
  securityModes: z.array(z.enum(["None", "Sign", "SignAndEncrypt"])).min(1).default(["SignAndEncrypt"]),
  pkiFolder: z.string().min(1).default("data/pki-server"),
  allowAnonymous: z.boolean().default(true),
});

export type OpcUaServerConfig = z.infer<typeof opcuaServerSchema>;

/** The root of every topic this box publishes: <prefix>/<box>. */
export const republishRoot = (r: Pick<RepublishConfig, "prefix" | "box">): string => `${r.prefix}/${r.box}`;

/**
 * Whether a topic filter (or an exact topic) matches any topic at or under `root`. Exported
 * for the test; used so that no plant signal is read from our own tree.
 */
export function filterOverlapsRoot(filter: string, root: string): boolean {
  const f = filter.split("/");
  const r = root.split("/");
  for (let i = 0; i < r.length; i++) {
    const l = f[i];
    if (l === undefined) return false;
    if (l === "#") return true;
    if (l !== "+" && l !== r[i]) return false;
  }
  // The filter goes deeper than the root (or equals it): our tree has topics there.
  return true;
}

export function checkRepublish(cfg: MillwardenConfig, ctx: CheckContext): void {
  const rp = cfg.republish;
  if (!rp) return;
  const root = republishRoot(rp);
  const clash = cfg.signals.filter((s) => s.topic !== undefined && filterOverlapsRoot(s.topic, root));
  if (clash.length) {
    const named = clash.slice(0, 3).map((s) => `signal "${s.id}" (${s.topic})`).join(", ");
    ctx.problem(["republish", "prefix"], `republish topics under ${root}/ would include the topic of ${named}${clash.length > 3 ? ` and ${clash.length - 3} more` : ""}: the box must never publish where a plant signal is read; choose another prefix or box`);
  }
  cfg.sources.forEach((src) => {
    if (src.kind !== "mqtt") return;
    for (const f of src.subscribe ?? [])
      if (filterOverlapsRoot(f, root))
        ctx.problem(["republish", "prefix"], `source "${src.id}" subscribes to ${f}, which covers the republish topics under ${root}/: the box would read its own output as plant data; choose another prefix or narrow the filter`);
  });
  const sp = rp.sparkplug;
  if (!sp) return;
  const ours = ["NBIRTH", "NDATA", "NDEATH"].map((t) => `spBv1.0/${sp.group}/${t}/${sp.node}`);
  cfg.signals.forEach((s, i) => {
    const same = s.sparkplug && s.sparkplug.group === sp.group && s.sparkplug.node === sp.node;
    if (same || (s.topic !== undefined && ours.some((t) => filterOverlapsRoot(s.topic!, t))))
      ctx.problem(["republish", "sparkplug", "node"], `the Sparkplug edge node ${sp.group}/${sp.node} is where signal "${s.id}" (signals[${i}]) is read from: the box must never publish as a plant edge node; choose another group or node id`);
  });
  cfg.sources.forEach((src) => {
    if (src.kind !== "mqtt") return;
    for (const f of src.subscribe ?? [])
      if (ours.some((t) => filterOverlapsRoot(f, t)))
        ctx.problem(["republish", "sparkplug", "node"], `source "${src.id}" subscribes to ${f}, which covers this box's own Sparkplug topics (spBv1.0/${sp.group}/+/${sp.node}): the box would read its own output as plant data; choose another group or node id, or narrow the filter`);
  });
}
