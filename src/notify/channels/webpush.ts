// Web Push (RFC 8030) through the web-push library: the payload encrypted for the browser
// (aes128gcm, RFC 8291 / RFC 8188) and the request signed with the box's VAPID key (RFC 8292).
// One outbox entry per subscription, so each browser gets a message once. A subscription the
// push service says is gone (404, 410) is dropped; 429 and 5xx are retried; other 4xx are not.
import type { Agent } from "node:https";
import webpush from "web-push";
import type { NotificationChannelConfig } from "../../config/sections/notifications.js";
import type { Tier } from "../../core/types.js";
import { shortTextOf } from "../message.js";
import { originOf } from "../redact.js";
import type { VapidKeys } from "../vapid.js";
import { errorText, shortHash, type Channel, type Delivery, type SendResult } from "./types.js";

type WebPushConfig = Extract<NotificationChannelConfig, { kind: "webpush" }>;

/** RFC 8030 §5.3: how soon the phone should wake for it. */
const URGENCY: Record<Tier, "low" | "normal" | "high"> = { notice: "low", caution: "normal", warning: "high" };
/** Push services accept about 4 kB of payload; titles and bodies are cut well below. */
const MAX_TITLE_CHARS = 200;
const MAX_BODY_CHARS = 1500;

/** What the browser's service worker receives (JSON). */
export interface PushPayload {
  title: string;
  body: string;
  url: string;
  kind: string;
  tier: Tier | null;
  advisoryId: string | null;
  atMs: number;
  advisoryOnly: string;
}

export function pushPayload(d: Delivery): PushPayload {
  const f = d.fields;
  return {
    title: d.subject.slice(0, MAX_TITLE_CHARS),
    body: shortTextOf(f).slice(0, MAX_BODY_CHARS),
    url: f.ackLink ?? f.link,
    kind: f.kind,
    tier: f.tier,
    advisoryId: f.advisoryId,
    atMs: f.atMs,
    advisoryOnly: "Advisory only: millwarden is not a safety system.",
  };
}

export interface SubscriptionKeys {
  p256dh: string;
  auth: string;
}

export class WebPushChannel implements Channel {
  readonly kind = "webpush" as const;
  readonly id: string;

  constructor(
    private readonly cfg: WebPushConfig,
    private readonly vapid: VapidKeys,
    /** The stored keys of a subscription, by endpoint (null once it was removed). */
    private readonly keysOf: (endpoint: string) => SubscriptionKeys | null,
    /** Called when the push service says a subscription is gone. */
    private readonly onGone: (endpoint: string) => void,
    /** An HTTPS agent (a test push service with its own certificate); default Node's. */
    private readonly agent?: Agent,
  ) {
    this.id = cfg.id;
  }

  async send(d: Delivery): Promise<SendResult> {
    const who = d.recipient.kind === "person" ? d.recipient.id : "the channel";
    if (!d.address) return { ok: false, retry: false, error: `${who} has no browser subscribed to Web Push` };
    const keys = this.keysOf(d.address);
    const where = `Web Push ${originOf(d.address)}`;
    if (!keys) return { ok: false, retry: false, error: `${where}: the subscription was removed before delivery` };
    try {
      await webpush.sendNotification({ endpoint: d.address, keys }, JSON.stringify(pushPayload(d)), {
        vapidDetails: { subject: this.cfg.subject, publicKey: this.vapid.publicKey, privateKey: this.vapid.privateKey },
        TTL: this.cfg.ttlS,
        urgency: d.fields.tier ? URGENCY[d.fields.tier] : "normal",
        // RFC 8030 §5.4: a newer message about the same advisory replaces one still waiting.
        topic: shortHash(`${d.fields.advisoryId ?? d.fields.kind}`),
        contentEncoding: "aes128gcm",
        timeout: this.cfg.timeoutS * 1000,
        ...(this.agent ? { agent: this.agent } : {}),
      });
      return { ok: true };
    } catch (err) {
      const status = (err as { statusCode?: unknown }).statusCode;
      if (typeof status === "number") {
        if (status === 404 || status === 410) {
          this.onGone(d.address);
          return { ok: false, retry: false, gone: true, error: `${where}: HTTP ${status}, the subscription is gone (removed)` };
        }
        return { ok: false, retry: status === 429 || status >= 500, error: `${where}: HTTP ${status}` };
      }
      // A network error (it has a code) or a timeout may pass; an error from checking the request (a bad key) will not.
      const code = (err as { code?: unknown }).code;
      const retry = typeof code === "string" || /timeout/i.test(errorText(err));
      return { ok: false, retry, error: `${where}: ${errorText(err)}` };
    }
  }

  async close(): Promise<void> {}
}
