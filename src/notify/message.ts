// What a notification says. Pure: the notifier builds MessageFields, this file turns them into
// a subject and a plain-text body that every channel shares (e-mail sends the text; webhook and
// MQTT send the fields as JSON with the text beside them; Web Push a short form).
//
// Every message says that it is advisory only and names the plant, and where they apply the
// unit, the indicator, its value, the limit, the trend, the time in UTC and in site time, and a
// link to the dashboard.
//
// The link: `${linkBase}/#advisory=<id>`. At delivery the service adds the acknowledge link
// (`${linkBase}/ack.html#t=<token>`: signed, single use, expiring, bound to the outbox entry;
// src/notify/ack-link.ts) to the fields and as an "Acknowledge:" line under "Open:"; the
// fragment keeps the token out of server logs and the Referer header.
import { ADVISORY_ONLY, type Tier } from "../core/types.js";
import { formatLocal, formatUtc } from "./zone.js";

export type MessageKind = "advisory" | "escalation" | "reminder" | "resolved" | "chatter" | "flood-start" | "flood-end" | "digest" | "test";

export type Recipient = { kind: "person"; id: string; name: string; address: string | null } | { kind: "channel" };

export const recipientKey = (r: Recipient): string => (r.kind === "person" ? `person:${r.id}` : "channel");

export interface MessageFields {
  advisoryOnly: string;
  kind: MessageKind;
  tier: Tier | null;
  site: string;
  plant: string;
  advisoryId: string | null;
  /** One line: what happened. */
  headline: string;
  unit: { id: string; name: string | null } | null;
  indicator: string | null;
  quantity: string | null;
  value: number | null;
  /** For a state rule: the states it watches (value and limit are then 1/0). */
  states: string[] | null;
  valueUnit: string;
  limit: number | null;
  direction: "high" | "low" | null;
  trend: { label: string; value: number; unit: string } | null;
  /** Why, as the advisory's lifecycle gave it. */
  why: string | null;
  /** What escalation or reminders will follow, or who the recipient is on call as. */
  note: string | null;
  /** Advisories listed by a flood summary or a digest. */
  items: string[];
  atMs: number;
  atUtc: string;
  atLocal: string;
  timeZone: string;
  link: string;
  /** The signed acknowledge link, added at delivery (src/notify/ack-link.ts); never stored. */
  ackLink?: string;
}

export interface Message {
  /** The event this message is about; with recipient and channel it is the outbox's deduplication key. */
  eventKey: string;
  channel: string;
  recipient: Recipient;
  subject: string;
  /** Plain text, lines of at most about 100 characters. */
  text: string;
  fields: MessageFields;
}

export function advisoryLink(linkBase: string, advisoryId: string | null): string {
  return advisoryId === null ? `${linkBase}/` : `${linkBase}/#advisory=${encodeURIComponent(advisoryId)}`;
}

/** A value for people: three significant figures at most, "unknown" for null. */
export function formatValue(v: number | null, unit: string): string {
  if (v === null) return "unknown";
  if (!Number.isFinite(v)) return "not approaching";
  const a = Math.abs(v);
  const s = a >= 100 ? v.toFixed(0) : a >= 10 ? v.toFixed(1) : v.toFixed(2);
  return unit ? `${s} ${unit}` : s;
}

const TIER_WORD: Record<Tier, string> = { notice: "NOTICE", caution: "CAUTION", warning: "WARNING" };

const KIND_WORD: Record<MessageKind, string> = {
  advisory: "",
  escalation: "ESCALATED",
  reminder: "REMINDER",
  resolved: "STAND DOWN",
  chatter: "CHATTERING",
  "flood-start": "FLOOD",
  "flood-end": "FLOOD OVER",
  digest: "DIGEST",
  test: "TEST",
};

export function subjectOf(f: MessageFields): string {
  const parts = ["[millwarden]"];
  if (KIND_WORD[f.kind]) parts.push(KIND_WORD[f.kind]);
  if (f.tier) parts.push(TIER_WORD[f.tier]);
  if (f.unit) parts.push(f.unit.id);
  parts.push(f.headline);
  return `${parts.join(" ")} (advisory only)`;
}

export function textOf(f: MessageFields): string {
  const lines: string[] = [`ADVISORY ONLY. ${f.headline}`, ""];
  const row = (label: string, v: string | null) => {
    if (v !== null && v !== "") lines.push(`${`${label}:`.padEnd(11)} ${v}`);
  };
  row("Plant", `${f.site}, ${f.plant}`);
  if (f.unit) row("Unit", f.unit.name ? `${f.unit.name} (${f.unit.id})` : f.unit.id);
  row("Indicator", f.indicator);
  if (f.indicator !== null) {
    if (f.states) {
      row("State", `one of ${f.states.join(", ")} (the reason below says which)`);
    } else {
      row("Value", formatValue(f.value, f.valueUnit));
      if (f.limit !== null) row("Limit", `${formatValue(f.limit, f.valueUnit)}${f.tier ? ` (${f.tier}, ${f.direction === "low" ? "low" : "high"} limit)` : ""}`);
    }
    row("Trend", f.trend ? `${f.trend.label} ${formatValue(f.trend.value, f.trend.unit)}` : "not known");
  }
  // Escalations and reminders carry the time the advisory was raised.
  row(f.kind === "escalation" || f.kind === "reminder" ? "Raised" : "Time", `${f.atUtc} / ${f.atLocal} (${f.timeZone})`);
  row("Reason", f.why);
  row("Note", f.note);
  if (f.items.length) {
    lines.push("");
    for (const it of f.items) lines.push(`  - ${it}`);
  }
  lines.push("", `Open: ${f.link}`, "", f.advisoryOnly, "");
  return lines.join("\n");
}

/** The few lines a phone shows: Web Push payloads are small (about 4 kB). */
export function shortTextOf(f: MessageFields): string {
  const bits: string[] = [];
  if (f.unit) bits.push(f.unit.id);
  if (f.indicator !== null && !f.states) bits.push(`${f.indicator} ${formatValue(f.value, f.valueUnit)}${f.limit !== null ? ` (limit ${formatValue(f.limit, f.valueUnit)})` : ""}`);
  if (f.trend) bits.push(`trend ${formatValue(f.trend.value, f.trend.unit)}`);
  bits.push(f.atLocal);
  return `${bits.join(" · ")}. Advisory only.`;
}

export interface FieldsInput {
  kind: MessageKind;
  tier: Tier | null;
  site: string;
  plant: string;
  advisoryId: string | null;
  headline: string;
  unit?: { id: string; name: string | null } | null;
  indicator?: string | null;
  quantity?: string | null;
  value?: number | null;
  states?: string[] | null;
  valueUnit?: string;
  limit?: number | null;
  direction?: "high" | "low" | null;
  trend?: { label: string; value: number; unit: string } | null;
  why?: string | null;
  note?: string | null;
  items?: string[];
  atMs: number;
  timeZone: string;
  linkBase: string;
}

export function makeFields(i: FieldsInput): MessageFields {
  return {
    advisoryOnly: ADVISORY_ONLY,
    kind: i.kind,
    tier: i.tier,
    site: i.site,
    plant: i.plant,
    advisoryId: i.advisoryId,
    headline: i.headline,
    unit: i.unit ?? null,
    indicator: i.indicator ?? null,
    quantity: i.quantity ?? null,
    value: i.value ?? null,
    states: i.states ?? null,
    valueUnit: i.valueUnit ?? "",
    limit: i.limit ?? null,
    direction: i.direction ?? null,
    trend: i.trend ?? null,
    why: i.why ?? null,
    note: i.note ?? null,
    items: i.items ?? [],
    atMs: i.atMs,
    atUtc: formatUtc(i.atMs),
    atLocal: formatLocal(i.timeZone, i.atMs),
    timeZone: i.timeZone,
    link: advisoryLink(i.linkBase, i.advisoryId),
  };
}
