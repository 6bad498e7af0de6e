// The notifications: section: channels (e-mail, webhook, MQTT, Web Push), the people who can
// be reached, on-call rosters with a weekly rotation in the site's time zone, routes by tier,
// unit and position, escalation, reminders, quiet hours, maintenance windows and the delivery
// policy of the outbox. Secrets never stand in the file: only the names of environment
// variables that hold them (passwordEnv, secretEnv), as for the sources.
//
// Checked here: the shape, the time zone, and every reference inside the section (people,
// channels, rosters). References to units and positions need the whole config:
// checkNotifications() below.
import { z } from "zod";
import { id, positive, text } from "./common.js";
import type { CheckContext } from "./context.js";
import { parseSiteTime } from "../../notify/zone.js";

const TIER = z.enum(["notice", "caution", "warning"]);
export const WEEKDAYS = ["mon", "tue", "wed", "thu", "fri", "sat", "sun"] as const;
export const ROLES = ["primary", "secondary", "supervisor"] as const;
export type Role = (typeof ROLES)[number];

/** A local time of day in the site's zone, "HH:MM"; "24:00" ends a day. */
export const hhmm = z.string().regex(/^(([01]\d|2[0-3]):[0-5]\d|24:00)$/, 'expected a local time "HH:MM" between 00:00 and 24:00');
/** A time in the site's zone ("2026-12-24T07:00"), or an absolute one with Z or an offset. */
export const siteTime = z
  .string()
  .regex(/^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}(:\d{2})?(Z|[+-]\d{2}:\d{2})?$/, 'expected a date and time "YYYY-MM-DDTHH:MM" in the site\'s time zone, or with Z or an offset');
const envName = z.string().regex(/^[A-Za-z_][A-Za-z0-9_]*$/, "expected the name of an environment variable (letters, digits, _)");

/** A daily test message: at this local time, to these people (person channels) or to the channel itself (webhook, MQTT). */
const dailyTest = z.strictObject({ at: hhmm, to: z.array(id).min(1).optional() });

const channelCommon = {
  id,
  /** Give up on one attempt after this long; it is then retried like any failure. */
  timeoutS: positive.default(15),
  dailyTest: dailyTest.optional(),
};

const emailChannel = z.strictObject({
  ...channelCommon,
  kind: z.literal("email"),
  host: z.string().min(1),
  port: z.number().int().min(1).max(65535).default(587),
  /** implicit: TLS from the first byte (usually port 465); starttls: upgrade required (587); none: plain (loopback relays only). */
  tls: z.enum(["implicit", "starttls", "none"]).default("starttls"),
  /** Refuse a server certificate that does not verify (keep true; use caFile for a site CA). */
  rejectUnauthorized: z.boolean().default(true),
  caFile: z.string().min(1).optional(),
  username: z.string().min(1).optional(),
  /** Read from this environment variable, never written in the file. */
  passwordEnv: envName.optional(),
  from: text,
});

const webhookChannel = z.strictObject({
  ...channelCommon,
  kind: z.literal("webhook"),
  url: z.string().regex(/^https?:\/\/[^\s/]+/, "expected an http:// or https:// URL"),
  /** The HMAC-SHA256 key, read from this environment variable. */
  secretEnv: envName,
});

const mqttChannel = z.strictObject({
  ...channelCommon,
  kind: z.literal("mqtt"),
  /** The site's messaging broker, never the plant's control system. */
  url: z.string().regex(/^(mqtt|mqtts|ws|wss):\/\//, "expected an mqtt://, mqtts://, ws:// or wss:// URL"),
  topic: z
    .string()
    .min(1)
    .regex(/^[^#+]+$/, "expected a topic without the wildcards + and #")
    .refine((t) => !t.startsWith("$"), "topics starting with $ belong to the broker"),
  qos: z.union([z.literal(0), z.literal(1), z.literal(2)]).default(1),
  protocolVersion: z.union([z.literal(4), z.literal(5)]).default(4),
  clientId: z.string().min(1).optional(),
  username: z.string().min(1).optional(),
  passwordEnv: envName.optional(),
});

const webPushChannel = z.strictObject({
  ...channelCommon,
  kind: z.literal("webpush"),
  /** VAPID contact of the sender (RFC 8292): mailto: or https:. */
  subject: z.string().regex(/^(mailto:\S+@\S+|https:\/\/\S+)$/, "expected mailto:address or an https:// URL"),
  /** VAPID key pair, created at the first run; relative to the historian's folder. */
  vapidFile: z.string().min(1).default("vapid.json"),
  /** How long the push service keeps an undelivered message. */
  ttlS: z.number().int().min(0).default(3600),
});

export const notificationChannel = z.discriminatedUnion("kind", [emailChannel, webhookChannel, mqttChannel, webPushChannel]);

const person = z.strictObject({
  id,
  name: text,
  /** How to reach the person: a channel and the address on it (e-mail: required; webhook, MQTT: passed on as "to"; Web Push: none, the browsers the person subscribed). */
  contacts: z.array(z.strictObject({ channel: id, address: z.string().min(1).optional() })).min(1),
});

const roster = z.strictObject({
  id,
  name: text.optional(),
  /**
   * Weekly rotation: week 0 starts at `startsAt` (site time), the next week exactly seven local
   * days later at the same local time, whatever the daylight-saving changes in between; the
   * weeks repeat in order.
   */
  rotation: z.strictObject({
    startsAt: siteTime,
    weeks: z.array(z.strictObject({ primary: id, secondary: id.optional() })).min(1),
  }),
  supervisor: id.optional(),
  /** Stand-ins: from (inclusive) to (exclusive), site time; the last one listed wins. */
  overrides: z.array(z.strictObject({ from: siteTime, to: siteTime, role: z.enum(ROLES), person: id, reason: text })).default([]),
});

const route = z
  .strictObject({
    /** Default: every tier. */
    tiers: z.array(TIER).min(1).default(["notice", "caution", "warning"]),
    /** Unit ids of the rules (default: any unit, and rules without a unit). */
    units: z.array(id).min(1).optional(),
    /** Operator positions (default: any). */
    positions: z.array(id).min(1).optional(),
    /** The on-call roster to page (its primary first, then along the escalation chain). */
    roster: id.optional(),
    /** Channels that receive every matching message themselves (a webhook to a paging gateway, an MQTT topic). */
    channels: z.array(id).min(1).optional(),
  })
  .refine((r) => r.roster !== undefined || r.channels !== undefined, { message: "a route needs roster: or channels: (or both)" });

const quietHours = z.strictObject({
  /** Days on which the quiet period starts (default every day). */
  days: z.array(z.enum(WEEKDAYS)).min(1).optional(),
  from: hhmm,
  /** At or before `from`: the period runs past midnight into the next day. */
  to: hhmm,
});

const maintenanceWindow = z.strictObject({
  from: siteTime,
  to: siteTime,
  /** Units under maintenance (default: the whole plant). */
  units: z.array(id).min(1).optional(),
  reason: text,
});

export const notificationsSchema = z
  .strictObject({
    /** IANA time zone of the site, e.g. Europe/Berlin: the rotation, quiet hours and the local time in messages. */
    timeZone: z.string().min(1),
    /** Base of the link in every message (the dashboard as the on-call engineer reaches it); default the server's address. */
    linkBase: z
      .string()
      .regex(/^https?:\/\/[^\s]+$/, "expected an http:// or https:// URL")
      .transform((u) => u.replace(/\/+$/, ""))
      .optional(),
    channels: z.array(notificationChannel).min(1),
    people: z.array(person).default([]),
    rosters: z.array(roster).default([]),
    routes: z.array(route).min(1),
    /** Not acknowledged after afterS: the next in the chain primary → secondary → supervisor is paged. */
    escalation: z
      .strictObject({ tiers: z.array(TIER).default(["warning"]), afterS: positive.default(600) })
      .default({ tiers: ["warning"], afterS: 600 }),
    /** Unacknowledged advisories of these tiers are repeated to everyone paged, every everyS, at most `max` times. */
    reminders: z
      .strictObject({ tiers: z.array(TIER).default(["warning"]), everyS: positive.default(1800), max: z.number().int().min(0).default(8) })
      .default({ tiers: ["warning"], everyS: 1800, max: 8 }),
    /** Notices and cautions wait for the end of quiet hours (one digest); warnings are never held back. */
    quietHours: z.array(quietHours).default([]),
    /** Notices and cautions of the units under maintenance are not sent; warnings are never held back. */
    maintenanceWindows: z.array(maintenanceWindow).default([]),
    /** Outbox: attempts with exponential backoff and jitter, then given up (state dead). */
    delivery: z
      .strictObject({
        maxAttempts: z.number().int().min(1).default(10),
        backoffBaseS: positive.default(5),
        backoffMaxS: positive.default(900),
        giveUpAfterS: positive.default(24 * 3600),
      })
      .default({ maxAttempts: 10, backoffBaseS: 5, backoffMaxS: 900, giveUpAfterS: 24 * 3600 }),
  })
  .superRefine((n, ctx) => {
    const problem = (path: (string | number)[], message: string) => ctx.addIssue({ code: "custom", path, message });
    let zoneOk = true;
    try {
      new Intl.DateTimeFormat("en-US", { timeZone: n.timeZone });
    } catch {
      zoneOk = false;
      problem(["timeZone"], `unknown time zone "${n.timeZone}": expected an IANA zone name such as Europe/Berlin or America/Chicago`);
    }
    /** A span of site times must be valid dates and end after it starts. */
    const span = (path: (string | number)[], from: string, to: string) => {
      if (!zoneOk) return;
      try {
        if (!(parseSiteTime(from, n.timeZone) < parseSiteTime(to, n.timeZone))) problem([...path, "to"], `expected "to" after "from"; found ${from} → ${to}`);
      } catch (e) {
        problem(path, (e as Error).message);
      }
    };
    const unique = (list: { id: string }[], section: string) => {
      const seen = new Map<string, number>();
      list.forEach((x, i) => {
        if (seen.has(x.id)) problem([section, i, "id"], `duplicate id "${x.id}" (first used at ${section}[${seen.get(x.id)}])`);
        else seen.set(x.id, i);
      });
    };
    unique(n.channels, "channels");
    unique(n.people, "people");
    unique(n.rosters, "rosters");
    const channels = new Map(n.channels.map((c) => [c.id, c]));
    const people = new Set(n.people.map((p) => p.id));
    const rosters = new Set(n.rosters.map((r) => r.id));
    const list = (s: Iterable<string>) => [...s].join(", ") || "none defined";
    const needPerson = (path: (string | number)[], pid: string) => {
      if (!people.has(pid)) problem(path, `unknown person "${pid}": expected one of the ids under notifications.people (${list(people)})`);
    };
    const needChannel = (path: (string | number)[], cid: string) => {
      if (!channels.has(cid)) problem(path, `unknown channel "${cid}": expected one of the ids under notifications.channels (${list(channels.keys())})`);
    };
    n.channels.forEach((c, i) => {
      if ((c.kind === "email" || c.kind === "mqtt") && (c.username === undefined) !== (c.passwordEnv === undefined))
        problem(["channels", i, "passwordEnv"], "username and passwordEnv go together (both for a login, neither without)");
      if (c.dailyTest?.to) c.dailyTest.to.forEach((p, j) => needPerson(["channels", i, "dailyTest", "to", j], p));
      if (c.dailyTest && !c.dailyTest.to && (c.kind === "email" || c.kind === "webpush"))
        problem(["channels", i, "dailyTest"], `a daily test on ${c.kind === "email" ? "an e-mail" : "a Web Push"} channel needs to: (the people who receive it)`);
    });
    n.people.forEach((p, i) =>
      p.contacts.forEach((k, j) => {
        needChannel(["people", i, "contacts", j, "channel"], k.channel);
        const kind = channels.get(k.channel)?.kind;
        if (kind === "email" && !(k.address && /^[^\s@]+@[^\s@]+$/.test(k.address)))
          problem(["people", i, "contacts", j, "address"], `an e-mail contact needs address: an e-mail address; found ${k.address === undefined ? "nothing" : JSON.stringify(k.address)}`);
        if (kind === "webpush" && k.address !== undefined)
          problem(["people", i, "contacts", j, "address"], "a Web Push contact has no address: the browsers the person subscribed are used");
      }),
    );
    n.rosters.forEach((r, i) => {
      if (zoneOk) {
        try {
          parseSiteTime(r.rotation.startsAt, n.timeZone);
        } catch (e) {
          problem(["rosters", i, "rotation", "startsAt"], (e as Error).message);
        }
      }
      r.rotation.weeks.forEach((w, j) => {
        needPerson(["rosters", i, "rotation", "weeks", j, "primary"], w.primary);
        if (w.secondary !== undefined) needPerson(["rosters", i, "rotation", "weeks", j, "secondary"], w.secondary);
      });
      if (r.supervisor !== undefined) needPerson(["rosters", i, "supervisor"], r.supervisor);
      r.overrides.forEach((o, j) => {
        needPerson(["rosters", i, "overrides", j, "person"], o.person);
        span(["rosters", i, "overrides", j], o.from, o.to);
      });
    });
    n.routes.forEach((r, i) => {
      if (r.roster !== undefined && !rosters.has(r.roster)) problem(["routes", i, "roster"], `unknown roster "${r.roster}": expected one of ${list(rosters)}`);
      r.channels?.forEach((c, j) => needChannel(["routes", i, "channels", j], c));
    });
    n.maintenanceWindows.forEach((w, i) => {
      span(["maintenanceWindows", i], w.from, w.to);
    });
  });

export type NotificationsConfig = z.infer<typeof notificationsSchema>;
export type NotificationChannelConfig = NotificationsConfig["channels"][number];
export type ChannelKind = NotificationChannelConfig["kind"];
export type PersonConfig = NotificationsConfig["people"][number];
export type RosterConfig = NotificationsConfig["rosters"][number];
export type RouteConfig = NotificationsConfig["routes"][number];

/**
 * Cross-checks that need the whole config: the units and positions named in routes and
 * maintenance windows exist, and an MQTT notification topic is none of the plant's own topics.
 * (Called by the loader's cross-check.)
 */
export function checkNotifications(
  cfg: { notifications?: NotificationsConfig | undefined; units: { id: string }[]; rules: { position: string }[]; signals: { topic?: string | undefined }[] },
  ctx: CheckContext,
): void {
  const n = cfg.notifications;
  if (!n) return;
  const positions = new Set(cfg.rules.map((r) => r.position));
  n.routes.forEach((r, i) => {
    r.units?.forEach((u, j) => ctx.needUnit(["notifications", "routes", i, "units", j], u));
    r.positions?.forEach((p, j) => {
      if (!positions.has(p)) ctx.problem(["notifications", "routes", i, "positions", j], `no rule has position "${p}": expected one of ${[...positions].join(", ") || "none"}`);
    });
  });
  n.maintenanceWindows.forEach((w, i) => w.units?.forEach((u, j) => ctx.needUnit(["notifications", "maintenanceWindows", i, "units", j], u)));
  const plantTopics = new Set(cfg.signals.map((s) => s.topic).filter((t): t is string => t !== undefined));
  n.channels.forEach((c, i) => {
    if (c.kind === "mqtt" && plantTopics.has(c.topic)) ctx.problem(["notifications", "channels", i, "topic"], `topic "${c.topic}" carries a plant signal: notifications go to a topic of their own`);
  });
}
