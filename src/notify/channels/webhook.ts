// Webhook: the message as JSON in an HTTP POST, signed with HMAC-SHA256 so the receiver can
// tell it comes from this box and was not changed on the way.
//
//   X-Millwarden-Timestamp: <Unix seconds>
//   X-Millwarden-Signature: hmac-sha256=<hex of HMAC-SHA256(key, timestamp + "\n" + body)>
//   X-Millwarden-Delivery:  <stable id of the outbox entry: a repeat after a crash has the same>
//
// The receiver recomputes the HMAC over the raw body with the same key, compares in constant
// time, and refuses a timestamp far from its own clock (a replayed request). 2xx is success;
// 408, 429 and 5xx are worth retrying, any other status is not; so is a network error.
import { createHmac } from "node:crypto";
import type { NotificationChannelConfig } from "../../config/sections/notifications.js";
import { originOf } from "../redact.js";
import { shortHash, type Channel, type Delivery, type SendResult } from "./types.js";

type WebhookConfig = Extract<NotificationChannelConfig, { kind: "webhook" }>;

export const TIMESTAMP_HEADER = "x-millwarden-timestamp";
export const SIGNATURE_HEADER = "x-millwarden-signature";
export const DELIVERY_HEADER = "x-millwarden-delivery";

/** The signature header's value for a body sent at `timestampS`. */
export function webhookSignature(key: string, timestampS: number, body: string): string {
  return `hmac-sha256=${createHmac("sha256", key).update(`${timestampS}\n${body}`).digest("hex")}`;
}

/** The JSON body: every field of the message, the text beside them, the recipient. */
export function webhookBody(d: Delivery): string {
  return JSON.stringify({
    delivery: shortHash(d.dedupKey),
    channel: d.channel,
    to: d.recipient.kind === "person" ? { person: d.recipient.id, name: d.recipient.name, address: d.address } : null,
    subject: d.subject,
    ...d.fields,
    text: d.text,
  });
}

export class WebhookChannel implements Channel {
  readonly kind = "webhook" as const;
  readonly id: string;
  private readonly key: string;

  constructor(
    private readonly cfg: WebhookConfig,
    env: NodeJS.ProcessEnv,
    /** Seconds since the epoch for the timestamp header (the wall clock; injectable for tests). */
    private readonly nowS: () => number = () => Math.floor(Date.now() / 1000),
  ) {
    this.id = cfg.id;
    const key = env[cfg.secretEnv];
    if (!key) throw new Error(`notification channel "${cfg.id}": environment variable ${cfg.secretEnv} (secretEnv) is not set`);
    this.key = key;
  }

  async send(d: Delivery): Promise<SendResult> {
    const body = webhookBody(d);
    const ts = this.nowS();
    const where = originOf(this.cfg.url);
    try {
      const res = await fetch(this.cfg.url, {
        method: "POST",
        headers: {
          "content-type": "application/json; charset=utf-8",
          [TIMESTAMP_HEADER]: String(ts),
          [SIGNATURE_HEADER]: webhookSignature(this.key, ts, body),
          [DELIVERY_HEADER]: shortHash(d.dedupKey),
        },
        body,
        redirect: "error",
        signal: AbortSignal.timeout(this.cfg.timeoutS * 1000),
      });
      // Read and drop the body so the connection can be reused; its text is not trusted into logs.
      await res.arrayBuffer().catch(() => undefined);
      if (res.ok) return { ok: true };
      const retry = res.status === 408 || res.status === 429 || res.status >= 500;
      return { ok: false, retry, error: `webhook ${where}: HTTP ${res.status}` };
    } catch (err) {
      const e = err as { name?: string; cause?: { code?: string } };
      const why = e.name === "TimeoutError" ? `no answer within ${this.cfg.timeoutS} s` : (e.cause?.code ?? e.name ?? "network error");
      return { ok: false, retry: true, error: `webhook ${where}: ${why}` };
    }
  }

  async close(): Promise<void> {}
}
