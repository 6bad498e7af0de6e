// Shared by the notification tests: a site with an on-call rotation, the advisories it knows,
// and builders for transitions and nuisance events. The plant is our invented Tarnholm Works.
import { notificationsSchema, type NotificationsConfig } from "../../src/config/sections/notifications.js";
import type { AdvisoryState, AdvisoryTransition, NuisanceEvent, Tier, TransitionKind } from "../../src/core/types.js";
import type { AdvisoryInfo } from "../../src/notify/catalogue.js";
import type { Message } from "../../src/notify/message.js";
import { Notifier } from "../../src/notify/notifier.js";

export const ZONE = "Europe/Berlin";
export const MIN = 60_000;
export const H = 3_600_000;

/** The notifications section as a site would write it (before defaults). */
export function notificationsInput(over: Record<string, unknown> = {}): Record<string, unknown> {
  return {
    timeZone: ZONE,
    linkBase: "https://millwarden.tarnholm.example/",
    channels: [
      { id: "mail", kind: "email", host: "127.0.0.1", port: 2525, tls: "none", from: "millwarden <millwarden@tarnholm.example>" },
      { id: "push", kind: "webpush", subject: "mailto:ops@tarnholm.example" },
      { id: "hook", kind: "webhook", url: "http://127.0.0.1:9/hook", secretEnv: "MW_HOOK_KEY" },
    ],
    people: [
      { id: "anna", name: "Anna Berg", contacts: [{ channel: "mail", address: "anna.berg@tarnholm.example" }, { channel: "push" }] },
      { id: "jonas", name: "Jonas Lind", contacts: [{ channel: "mail", address: "jonas.lind@tarnholm.example" }] },
      { id: "mira", name: "Mira Holt", contacts: [{ channel: "mail", address: "mira.holt@tarnholm.example" }] },
      { id: "lena", name: "Lena Voss", contacts: [{ channel: "mail", address: "lena.voss@tarnholm.example" }] },
    ],
    rosters: [
      {
        id: "process",
        name: "process on call",
        // Monday 5 January 2026, 07:00 site time; week 1 begins Monday 12 January 07:00.
        rotation: { startsAt: "2026-01-05T07:00", weeks: [{ primary: "anna", secondary: "jonas" }, { primary: "jonas", secondary: "anna" }] },
        supervisor: "mira",
        overrides: [{ from: "2026-01-07T07:00", to: "2026-01-08T07:00", role: "primary", person: "lena", reason: "swap with Anna" }],
      },
    ],
    routes: [
      { tiers: ["caution", "warning"], roster: "process", channels: ["hook"] },
      { tiers: ["notice"], channels: ["hook"] },
    ],
    escalation: { afterS: 600 },
    reminders: { everyS: 1800, max: 3 },
    quietHours: [{ from: "22:00", to: "06:00" }],
    maintenanceWindows: [{ from: "2026-02-02T06:00", to: "2026-02-02T18:00", units: ["fs2"], reason: "silo inspection" }],
    ...over,
  };
}

export const parseNotifications = (over: Record<string, unknown> = {}): NotificationsConfig => notificationsSchema.parse(notificationsInput(over));

export const ADVISORIES: AdvisoryInfo[] = [
  {
    id: "o2-margin-vm2",
    title: "O2 margin at the mill outlet",
    unitId: "vm2",
    unitName: "Vertical roller mill 2",
    position: "control-room",
    quantity: "o2.vm2.marginPctPt",
    indicator: "Vertical roller mill 2 O2 margin to the limit",
    valueUnit: "%-pt",
    direction: "low",
    states: null,
    trend: { key: "o2.vm2.trendPctPtPerMin", label: "Vertical roller mill 2 O2 trend", unit: "%-pt/min" },
  },
  {
    id: "co-gradient-bf2",
    title: "CO rising at the bag filter",
    unitId: "bf2",
    unitName: "Bag filter 2",
    position: "control-room",
    quantity: "co.bf2-outlet.gradientPpmPerMin",
    indicator: "Bag filter outlet CO gradient",
    valueUnit: "ppm/min",
    direction: "high",
    states: null,
    trend: null,
  },
  {
    id: "co-silo-fs2",
    title: "CO rising in the fine-coal silo",
    unitId: "fs2",
    unitName: "Fine-coal silo 2",
    position: "control-room",
    quantity: "co.fs2-top.riseLongPpmPerH",
    indicator: "Fine-coal silo CO rise",
    valueUnit: "ppm/h",
    direction: "high",
    states: null,
    trend: null,
  },
  {
    id: "dewpoint-bf2",
    title: "Dew point margin at the filter outlet",
    unitId: "bf2",
    unitName: "Bag filter 2",
    position: "control-room",
    quantity: "dewpoint.bf2-outlet.marginK",
    indicator: "Bag filter outlet dew point margin",
    valueUnit: "K",
    direction: "low",
    states: null,
    trend: { key: "dewpoint.bf2-outlet.marginTrendKPerMin", label: "Bag filter outlet dew point margin trend", unit: "K/min" },
  },
];

export function makeNotifier(over: Record<string, unknown> = {}): Notifier {
  return new Notifier({ config: parseNotifications(over), site: "Tarnholm Works", plant: "Coal grinding line 2", linkBase: "https://millwarden.tarnholm.example", advisories: ADVISORIES });
}

export function tr(
  advisoryId: string,
  transition: TransitionKind,
  atMs: number,
  o: { from?: AdvisoryState; to?: AdvisoryState; tier?: Tier; value?: number | null; limit?: number; by?: string; why?: string } = {},
): AdvisoryTransition {
  const defaults: Partial<Record<TransitionKind, [AdvisoryState, AdvisoryState]>> = {
    raise: ["normal", "unack"],
    escalate: ["unack", "unack"],
    "de-escalate": ["unack", "unack"],
    ack: ["unack", "ack"],
    clear: ["ack", "normal"],
    "re-alert": ["ack", "unack"],
    reset: ["latched", "normal"],
    shelve: ["unack", "shelved"],
    unshelve: ["shelved", "unack"],
  };
  const [from, to] = defaults[transition] ?? ["unack", "normal"];
  return {
    kind: "advisory",
    atMs,
    advisoryId,
    ruleId: advisoryId,
    transition,
    from: o.from ?? from,
    to: o.to ?? to,
    tier: o.tier ?? "caution",
    value: o.value === undefined ? 1.5 : o.value,
    limit: o.limit ?? 2,
    by: o.by ?? "millwarden",
    why: o.why ?? `${transition} for the test`,
  };
}

export function nuisance(type: NuisanceEvent["type"], atMs: number, advisoryId: string | null, count = 3, position = "control-room"): NuisanceEvent {
  return { kind: "nuisance", atMs, type, position, advisoryId, count, why: `${type} for the test` };
}

/** "channel→recipient" for each message, sorted: who got what. */
export const who = (ms: readonly Message[]): string[] =>
  ms.map((m) => `${m.channel}→${m.recipient.kind === "person" ? m.recipient.id : "channel"}`).sort();

/** The kinds of the messages, in order. */
export const kinds = (ms: readonly Message[]): string[] => ms.map((m) => m.fields.kind);
