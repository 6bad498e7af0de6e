// What the HTTP server needs from the daemon. The server holds no plant state of its
// own: it reads through these functions, so tests can hand it a small in-memory
// implementation and the daemon hands it the live one.
import type { AdvisoryTransition, AdvisoryView, CommandKind, LiveMessage, PlantState, Quality } from "../core/types.js";
import type { AccountRole, AccountStore } from "../store/accounts.js";
import type { Handover } from "./handover.js";
import type { RuleView } from "./rules.js";
import type { DeliveryLogRow } from "../store/outbox.js";

export interface TrendPoint {
  tMs: number;
  value: number | null;
  quality: Quality | "ok" | "unknown";
  /** The band a downsampled point stands for. */
  min?: number | null;
  max?: number | null;
}

export interface HealthView {
  status: "ok" | "degraded";
  advisoryOnly: string;
  startedAtMs: number;
  nowMs: number;
  sources: { id: string; kind: string; connected: boolean; samples: number; rejected: number; lastError: string | null }[];
  historian: { state: "ok" | "degraded"; queueDepth: number; rowsWritten: number; lastError: string | null };
  /** Present when notifications are configured (src/notify/service.ts); a failing channel does not make the status degraded. */
  notifications?: NotificationsHealth;
}

/** The notification channels: each one's last success and failure, and what waits in the outbox. */
export interface NotificationsHealth {
  status: "ok" | "failing";
  channels: {
    id: string;
    kind: string;
    /** failing: the last attempt failed (or the channel cannot be used); idle: nothing tried yet. */
    state: "ok" | "failing" | "idle";
    lastSuccessMs: number | null;
    lastFailureMs: number | null;
    /** Never holds a secret. */
    lastError: string | null;
    /** Entries waiting for a first or a further attempt. */
    pending: number;
    /** Entries given up on. */
    dead: number;
    /** Entries delivered (since the outbox began). */
    sent?: number;
    /**
     * A channel with a daily test whose last success (test or other message) is more than
     * SILENT_AFTER_MS ago, or that has had none that long since the start: nobody knows it works.
     */
    silent?: boolean;
    /** failing: since when (the first failure after the last success). */
    failingSinceMs?: number | null;
  }[];
  /** Advisories whose on-call chain is running (escalation, reminders). */
  escalating: number;
  /** The outbox could not take messages at the last attempt. */
  outboxError: string | null;
  /** The Web Push VAPID public key browsers subscribe with (null without a Web Push channel). */
  vapidPublicKey: string | null;
}

export type AckResult =
  | { ok: true; advisory: AdvisoryView | null }
  | { ok: false; status: 400 | 403 | 404 | 409; error: string };

/** What a person sends with a command on an advisory (POST /api/advisories/:id/<command>). */
export interface AdvisoryCommandFields {
  /** ack, reset: an optional note. */
  note?: string;
  /** shelve, out-of-service (required); unshelve, return-to-service (optional). */
  reason?: string;
  /** shelve: timed, in seconds (at most advisoryPolicy.maxShelveS). */
  durationS?: number;
  /** shelve: until the condition clears (within the maximum). */
  oneShot?: boolean;
}

/** A command as the server hands it on: the body's fields, with who and in what role from the login session. */
export interface AdvisoryCommandBody extends AdvisoryCommandFields {
  by: string;
  role: AccountRole;
}

/** The accounts and the audit log (src/store/accounts.ts): what the login and the records need. */
export type AccountsPort = Pick<AccountStore, "findUser" | "appendAudit" | "auditLog">;

/** What an acknowledge link stands for, or why it does not work (src/notify/ack-link.ts). */
export type AckLinkLookup =
  | {
      ok: true;
      outboxId: number;
      advisoryId: string;
      /** The channel the link was sent on, and its kind (email, webhook, mqtt, webpush). */
      channel: string;
      channelKind: string;
      /** The roster person it was sent to (null: a channel-wide message). */
      personId: string | null;
      expiresAtMs: number;
      subject: string;
    }
  | { ok: false; status: 404 | 409 | 410; error: string };

/** A browser's Web Push subscription as the Push API's PushSubscription.toJSON() gives it. */
export interface PushSubscriptionInput {
  endpoint: string;
  p256dh: string;
  auth: string;
}

/** Notifications as the HTTP side sees them (src/notify/service.ts; absent without a notifications: section). */
export interface NotifyPort {
  /** The link's entry, checked (signature, expiry, not used); no side effect. */
  inspectAckLink(token: string): AckLinkLookup;
  /** Checks the link again and marks it used by `by` (once: a second call answers 409). */
  useAckLink(token: string, by: string): AckLinkLookup;
  /** Stops the escalation of the advisory (NotifyService.acknowledge). */
  acknowledged(advisoryId: string, by: string): void;
  /** The scrypt hash of the user's PIN (millwarden user pin), or null. */
  pinHash(user: string): string | null;
  deliveries(limit: number): DeliveryLogRow[];
  /** null without a Web Push channel. */
  vapidPublicKey(): string | null;
  /** The roster person an account stands for: the person whose id is the account's name (without case), or null. */
  personOf(user: string): string | null;
  subscribe(personId: string, s: PushSubscriptionInput): void;
  /** Removes the person's subscription with this endpoint; false when there was none. */
  unsubscribe(personId: string, endpoint: string): boolean;
}

export interface AppDeps {
  getState(): PlantState;
  health(): HealthView;
  /** Current advisories, and the latest transitions from the historian (newest first). */
  advisories(opts: { limit: number }): { active: AdvisoryView[]; history: AdvisoryTransition[] };
  /**
   * A command on an advisory, timed by the daemon; the result carries the advisory as it is now
   * (null once normal). The server has checked the role already; the daemon maps it onto the
   * core's roles (admin acts as engineer).
   */
  command(advisoryId: string, kind: CommandKind, body: AdvisoryCommandBody): AckResult;
  /** Raw signal ids and derived keys both, about `points` points; throws UnknownSeriesError for anything else. */
  trend(series: string, fromMs: number, toMs: number, points: number): TrendPoint[];
  /** Register for live messages; returns the unsubscribe function. */
  subscribe(listener: (msg: LiveMessage) => void): () => void;
  /** Folder with the browser side (index.html and its assets). */
  dashboardDir: string;
  /** GET /metrics: the Prometheus text exposition format and its content type (absent: 404). */
  metrics?(): Promise<{ contentType: string; body: string }>;
  /** Accounts for the login, and the audit log every login, logout and command is written to. */
  accounts: AccountsPort;
  /** Notifications: acknowledge links, the delivery log, Web Push sign-up (absent: those routes answer 404). */
  notify?: NotifyPort;
  /** GET /api/rules: the configured rules with every tier's limit (src/server/rules.ts; absent: 404). */
  rules?(): RuleView[];
  /** GET /api/handover: the last `hours` of data time (src/server/handover.ts; absent: 404). */
  handover?(hours: number): Handover;
}

export class UnknownSeriesError extends Error {
  constructor(public readonly series: string) {
    super(`unknown series "${series}": expected a signal id or a derived key listed in GET /api/state`);
    this.name = "UnknownSeriesError";
  }
}
