// The shape of a millwarden config file. Every key is documented in
// config/demo.yaml; this schema is what the loader checks it against.
// Cross-references (a rule naming a quantity, a unit naming a signal) are checked
// in load.ts after the shape is known to be right.
import { z } from "zod";
import { UNIT_NAMES } from "./units.js";

import { id, mqttTls, positive, text } from "./sections/common.js";
import { dewPointSection } from "./sections/dew-point.js";
import { coSection } from "./sections/co.js";
import { oxygenSchema } from "./sections/oxygen.js";
import { phaseSchema } from "./sections/phase.js";
import { analysersSection } from "./sections/analysers.js";
import { notificationsSchema } from "./sections/notifications.js";
import { opcuaServerSchema, republishSchema } from "./sections/republish.js";

/** An MQTT topic filter: + stands for one whole level, # for the whole rest (last level only). */
const topicFilter = z
  .string()
  .min(1)
  .refine((f) => !f.includes("\u0000") && f.split("/").every((l, i, all) => (l.includes("+") ? l === "+" : true) && (l.includes("#") ? l === "#" && i === all.length - 1 : true)), {
    message: "expected an MQTT topic filter: + only as a whole level, # only as the whole last level (e.g. tarnholm/cg2/# or spBv1.0/cg2/+/edge-vm2)",
  });

const mqttSource = z
  .strictObject({
    id,
    kind: z.literal("mqtt"),
    url: z.string().regex(/^(mqtt|mqtts|ws|wss):\/\//, "expected an mqtt://, mqtts://, ws:// or wss:// URL"),
    /** 4: MQTT 3.1.1, 5: MQTT 5. */
    protocolVersion: z.union([z.literal(4), z.literal(5)]).default(4),
    clientId: z.string().min(1).optional(),
    /**
     * false: a persistent session, so QoS 1 messages published during a short outage are kept by
     * the broker and delivered after the reconnection. Needs a fixed clientId. Default true.
     */
    clean: z.boolean().optional(),
    /** MQTT 5: how long the broker keeps the session after a disconnection (default 3600 with clean: false, else 0). */
    sessionExpiryIntervalS: z.number().int().min(0).max(4294967295).optional(),
    username: z.string().optional(),
    /** Read from this environment variable, never written in the file. */
    passwordEnv: z.string().optional(),
    qos: z.union([z.literal(0), z.literal(1)]).default(0),
    /** TLS (mqtts:// or wss://): PEM files, read at start. */
    tls: mqttTls.optional(),
    /**
     * Topic filters to subscribe to instead of one subscription per signal topic; messages are
     * still routed to signals by their exact topic, and the unmatched ones are only counted.
     */
    subscribe: z.array(topicFilter).min(1).optional(),
    /** How each message body is read; `payload: sparkplug` is short for `{ format: sparkplug }`. */
    payload: z
      .preprocess(
        (v) => (v === "sparkplug" ? { format: "sparkplug" } : v),
        z.strictObject({
          /** sparkplug: every message is Sparkplug B (on a JSON source, spBv1.0/ topics are read so for the signals with sparkplug:). */
          format: z.enum(["json", "number", "sparkplug"]).default("json"),
          valuePath: z.string().min(1).default("value"),
          timePath: z.string().min(1).optional(),
          qualityPath: z.string().min(1).optional(),
        }),
      )
      .default({ format: "json", valuePath: "value" }),
    /** A payload time further ahead of the box's clock than this is rejected. */
    maxClockSkewS: positive.default(30),
  })
  .refine((s) => s.clean !== false || s.clientId !== undefined, {
    message: "clean: false (a persistent session) needs a fixed clientId: the broker keeps the session under that name",
    path: ["clientId"],
  })
  .refine((s) => s.sessionExpiryIntervalS === undefined || s.protocolVersion === 5, {
    message: "sessionExpiryIntervalS is an MQTT 5 setting: expected protocolVersion: 5 (with MQTT 3.1.1 the broker decides how long a session lives)",
    path: ["sessionExpiryIntervalS"],
  })
  .refine((s) => s.tls === undefined || /^(mqtts|wss):\/\//.test(s.url), {
    message: "tls: needs an mqtts:// or wss:// url",
    path: ["url"],
  })
  .refine((s) => s.passwordEnv === undefined || s.username !== undefined, {
    message: "passwordEnv needs a username (MQTT sends a password only with a user name)",
    path: ["username"],
  });

/**
 * An OPC UA server, read only: millwarden subscribes and reads, it never writes or calls
 * methods. The application instance certificate is created in pkiFolder on first run;
 * server certificates are trusted explicitly (`millwarden pki list|trust`).
 */
const opcuaSource = z
  .strictObject({
    id,
    kind: z.literal("opcua"),
    endpointUrl: z.string().regex(/^opc\.tcp:\/\/[^\s/]+/, "expected an opc.tcp://host:port URL"),
    securityMode: z.enum(["None", "Sign", "SignAndEncrypt"]).default("SignAndEncrypt"),
    securityPolicy: z.enum(["None", "Basic256Sha256", "Aes128_Sha256_RsaOaep", "Aes256_Sha256_RsaPss"]).default("Basic256Sha256"),
    /** Anonymous when absent. */
    username: z.string().min(1).optional(),
    /** Read from this environment variable, never written in the file. */
    passwordEnv: z.string().min(1).optional(),
    /** Own certificate and key, trusted/ and rejected/ server certificates. */
    pkiFolder: z.string().min(1).default("data/pki"),
    /** Accept any server certificate: for a first look on a bench only, never on a plant. */
    trustUnknownServerCertificates: z.boolean().default(false),
    publishingIntervalMs: positive.default(1000),
    /** Default for signals without their own samplingIntervalMs. */
    samplingIntervalMs: z.number().nonnegative().default(1000),
    /** A source time further ahead of the box's clock than this is rejected. */
    maxClockSkewS: positive.default(30),
  })
  .refine((s) => (s.securityMode === "None") === (s.securityPolicy === "None"), {
    message: "securityMode None goes with securityPolicy None, and Sign or SignAndEncrypt with one of Basic256Sha256, Aes128_Sha256_RsaOaep, Aes256_Sha256_RsaPss",
    path: ["securityPolicy"],
  })
  .refine((s) => (s.username === undefined) === (s.passwordEnv === undefined), {
    message: "username and passwordEnv go together (both for user name login, neither for anonymous)",
    path: ["passwordEnv"],
  });

/** A Sparkplug B identifier (group, edge node, device): a topic level, so no / + or #. */
const sparkplugId = z.string().regex(/^[^/+#]+$/, "expected a Sparkplug B id: one topic level, without / + or #");

const signal = z.strictObject({
  id,
  name: text,
  /** The plant's own tag name (ISA-5.1 letters with site prefix); mapped, never parsed. */
  tag: text,
  source: id,
  /** Exact topic; wildcards belong in the source's subscribe:. Derived for a Sparkplug signal. */
  topic: z
    .string()
    .min(1)
    .regex(/^[^+#]+$/, "a signal's topic is exact, without + or #: put a wildcard filter under the source's subscribe:")
    .optional(),
  /**
   * Sparkplug B metric: group id, edge node id, device id (absent for the edge node's own
   * metrics) and the metric name as in the birth message (folders with /).
   */
  sparkplug: z.strictObject({ group: sparkplugId, node: sparkplugId, device: sparkplugId.optional(), metric: z.string().min(1) }).optional(),
  /**
   * JSON path of a flag in the value's own message: true (or 1, "true", "on", "yes") means the
   * analyser is in function check (NAMUR NE 107 category C), so the value is not trusted.
   */
  functionCheckPath: z.string().min(1).optional(),
  /** OPC UA node id (signals of an opcua source), e.g. "ns=1;s=VM2-TT-111" or "nsu=urn:...;s=...". */
  nodeId: z
    .string()
    .regex(/^(ns=\d+;|nsu=[^;]+;)?[isgb]=.+$/, "expected an OPC UA node id such as ns=1;s=VM2-TT-111, ns=2;i=1001 or nsu=urn:site:plant;s=TT-1")
    .optional(),
  /**
   * OPC UA sampling interval and server queue size. No deadband is ever requested: a
   * deadband can hide a slow CO rise, each step below it being dropped at the server.
   */
  samplingIntervalMs: z.number().nonnegative().optional(),
  queueSize: z.number().int().min(1).max(1000).optional(),
  /** JSON path of the value inside the payload; overrides the source's default. */
  valuePath: z.string().min(1).optional(),
  unit: z.enum(UNIT_NAMES as [string, ...string[]]),
  scale: z.number().default(1),
  offset: z.number().default(0),
  /** Plausible range in the signal's own unit (after scale and offset); values outside are marked bad. */
  range: z.tuple([z.number(), z.number()]).optional(),
  expectedPeriodS: positive,
  /** For O2 signals: what the analyser reads (in-situ probes read wet, extractive with a cooler dry). */
  basis: z.enum(["wet", "dry"]).optional(),
  /** Id of the analyser it comes from, declared under analysers: (its health decides trust). */
  analyser: id.optional(),
  /**
   * For a flow in Am3/h: the gas temperature (a signal, or { degC } fixed) and the gauge pressure
   * (a signal; absent = atmospheric) at the meter, to convert it to Nm³/h (DIN 1343: 0 °C, 1013.25 hPa).
   */
  actualConditions: z
    .strictObject({ temperature: z.union([id, z.strictObject({ degC: z.number() })]), gaugePressure: id.optional() })
    .optional(),
})
  .refine((s) => !(s.sparkplug && s.topic), { message: "a Sparkplug signal is found by sparkplug: (group, node, device, metric): leave out topic:", path: ["topic"] })
  .refine((s) => !(s.sparkplug && (s.functionCheckPath || s.valuePath)), { message: "valuePath and functionCheckPath read a JSON message; a Sparkplug signal takes its value from its metric", path: ["sparkplug"] })
  // A Sparkplug signal's topic is where its data arrive (NDATA, or DDATA for a device): it names
  // the signal's topic in messages and meets the rule that an MQTT signal has a topic.
  .transform((s) => {
    const sp = s.sparkplug;
    if (!sp || s.topic) return s;
    return { ...s, topic: sp.device === undefined ? `spBv1.0/${sp.group}/NDATA/${sp.node}` : `spBv1.0/${sp.group}/DDATA/${sp.node}/${sp.device}` };
  });

/** One signal as a config file gives it (for code that builds configs, e.g. the simulator's Sparkplug variant). */
export const signalSchema = signal;

const unit = z.strictObject({
  id,
  name: text,
  kind: z.enum(["hot-gas-generator", "mill", "classifier", "bag-filter", "dust-hopper", "silo", "duct"]),
  oxygen: oxygenSchema.optional(),
  phase: phaseSchema.optional(),
});

const tierThresholds = z
  .strictObject({ notice: z.number().optional(), caution: z.number().optional(), warning: z.number().optional() })
  .refine((t) => t.notice !== undefined || t.caution !== undefined || t.warning !== undefined, {
    message: "expected at least one of notice, caution, warning",
  });

const millPhase = z.enum(["standstill-empty", "standstill-loaded", "warm-up", "inerting", "starting", "grinding", "stopping", "maintenance", "unknown"]);

const rule = z.strictObject({
  id,
  title: text,
  unit: id.optional(),
  /**
   * A signal id or a derived key (see DEVELOPERS.md, "Derived keys"), or for a state rule a
   * state key: phase.<unit>, inerting.<unit>, analyser.<id>.
   */
  quantity: z.string().min(1),
  /** Threshold rule: direction and thresholds per tier. */
  direction: z.enum(["high", "low"]).optional(),
  tiers: tierThresholds.optional(),
  /**
   * Rate rule: the thresholds apply to the quantity's rate of change per minute (least squares
   * over windowS, known once the values cover half of it; none across an unknown value).
   */
  rate: z.strictObject({ windowS: positive }).optional(),
  /** Thresholds per coal type (site.coal.type picks one), instead of tiers: e.g. a mill outlet temperature limit. */
  tiersByCoal: z.record(id, tierThresholds).optional(),
  /** State rule: active while the state key holds one of these values, at this tier. */
  states: z.array(z.string().min(1)).min(1).optional(),
  tier: z.enum(["notice", "caution", "warning"]).optional(),
  deadband: z.number().nonnegative().default(0),
  /** The condition must hold this long before the advisory is raised (or escalated). */
  onDelayS: z.number().nonnegative().default(0),
  /** The condition must be gone this long before the advisory clears (or de-escalates). */
  offDelayS: z.number().nonnegative().default(0),
  /** An acknowledged advisory still active after this long asks for acknowledgement again. */
  reAlertS: z.number().positive().optional(),
  /** After the condition clears the advisory stays until someone resets it. */
  latching: z.boolean().default(false),
  /** Phases of `phaseUnit` (default: `unit`) in which the rule applies; outside them it is suppressed by design. */
  phases: z.array(millPhase).min(1).optional(),
  phaseUnit: id.optional(),
  /** Operator position the advisory goes to (flood and rates are counted per position). */
  position: id.default("control-room"),
  cause: text,
  consequence: text,
  check: text,
  /** Where the thresholds come from: site hazard study, a named standard, or common practice. */
  origin: text,
});

/**
 * Nuisance control and shelving limits. The defaults are the figures DESIGN.md §5 gives after
 * ISA-18.2 / EEMUA 191 (from memory): chatter 3 raises in 60 s, flood more than 10 raises in
 * 10 min ending below 5, standing over 24 h.
 */
const advisoryPolicy = z
  .strictObject({
    /** Longest shelve an operator may set (timed or one-shot). */
    maxShelveS: positive.default(8 * 3600),
    /** Whether a warning-tier advisory may be shelved at all (off unless the site decides otherwise). */
    shelveWarnings: z.boolean().default(false),
    chatterCount: z.number().int().min(2).default(3),
    chatterWindowS: positive.default(60),
    floodCount: z.number().int().min(2).default(10),
    floodEndCount: z.number().int().min(1).default(5),
    floodWindowS: positive.default(600),
    standingS: positive.default(24 * 3600),
  })
  .default({ maxShelveS: 8 * 3600, shelveWarnings: false, chatterCount: 3, chatterWindowS: 60, floodCount: 10, floodEndCount: 5, floodWindowS: 600, standingS: 24 * 3600 });

export const configSchema = z.strictObject({
  site: z.strictObject({
    name: text,
    plant: text,
    /** Barometric pressure at the site, used where no measured value is configured. */
    barometricPressureHPa: z.number().min(500).max(1100),
    /** Optional measured barometric pressure signal (takes precedence while trustworthy). */
    barometricSignal: id.optional(),
    /** The coal ground now: rules with tiersByCoal take the thresholds set for it. */
    coal: z.strictObject({ type: id, origin: text.optional() }).optional(),
  }),
  /** wall: ticks from the box's clock (live); data: ticks from the samples' own time (replay, accelerated simulation). */
  clock: z.enum(["wall", "data"]).default("wall"),
  storage: z
    .strictObject({
      path: z.string().min(1).default("data/millwarden.db"),
      /** NORMAL: a power cut may lose the last commits, never the file; FULL: an fsync per batch. */
      synchronous: z.enum(["NORMAL", "FULL"]).default("NORMAL"),
      /** Raw samples are kept this long (compressed after a few minutes). */
      rawRetentionDays: positive.default(30),
      /** 1-minute roll-ups (min, max, mean, count, last) are kept this long. */
      rollupRetentionDays: positive.default(365),
      /** Recent rows are sealed into compressed chunks this often. */
      sealIntervalS: positive.default(300),
      /** Disk budget: the oldest expired data is pruned first to stay under it. */
      maxDatabaseBytes: z.number().int().positive().optional(),
      /**
       * Warm start: at most this much recent history is replayed through the core at start, to
       * refill its windows and baselines (the longest window the config uses, at least an hour).
       */
      warmStartMaxS: z.number().nonnegative().default(6 * 3600),
    })
    .default({ path: "data/millwarden.db", synchronous: "NORMAL", rawRetentionDays: 30, rollupRetentionDays: 365, sealIntervalS: 300, warmStartMaxS: 6 * 3600 }),
  server: z
    .strictObject({
      host: z.string().min(1).default("127.0.0.1"),
      port: z.number().int().min(0).max(65535).default(8480),
      /** The read-only views (state, advisories, trends, health, live feed) need a login too; commands always do. */
      requireLoginForViews: z.boolean().default(false),
    })
    .default({ host: "127.0.0.1", port: 8480, requireLoginForViews: false }),
  sources: z.array(z.discriminatedUnion("kind", [mqttSource, opcuaSource])).min(1),
  signals: z.array(signal).min(1),
  units: z.array(unit).min(1),
  ...dewPointSection,
  ...coSection,
  ...analysersSection,
  advisoryPolicy,
  rules: z.array(rule).default([]),
  /** Reaching the on-call engineer (src/config/sections/notifications.ts); none when absent. */
  notifications: notificationsSchema.optional(),
  /** Publishing derived values, states and advisories to the site's messaging broker (src/config/sections/republish.ts); none when absent. */
  republish: republishSchema.optional(),
  /** Derived values, states and advisory states served read only over OPC UA (no writes, no methods); none when absent. */
  opcuaServer: opcuaServerSchema.optional(),
});

export type MillwardenConfig = z.infer<typeof configSchema>;
export type SignalConfig = MillwardenConfig["signals"][number];
/** Any source, by kind. */
export type AnySourceConfig = MillwardenConfig["sources"][number];
/** The MQTT source's config (the name decode.ts and mqtt.ts were written against). */
export type SourceConfig = Extract<AnySourceConfig, { kind: "mqtt" }>;
export type MqttSourceConfig = SourceConfig;
export type OpcUaSourceConfig = Extract<AnySourceConfig, { kind: "opcua" }>;
export type UnitConfig = MillwardenConfig["units"][number];
export type { DewPointConfig } from "./sections/dew-point.js";
export type { CoPointConfig } from "./sections/co.js";
export type RuleConfig = MillwardenConfig["rules"][number];
export type AdvisoryPolicy = MillwardenConfig["advisoryPolicy"];
