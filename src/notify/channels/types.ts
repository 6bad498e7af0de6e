// The port every notification channel implements: send one delivery, say whether it went,
// and if not, whether trying again could help. An adapter never throws for a failure of the
// receiver and never puts a secret into its error text (the service redacts once more).
import { createHash } from "node:crypto";
import type { ChannelKind } from "../../config/sections/notifications.js";
import type { MessageFields, Recipient } from "../message.js";

export type SendResult =
  | { ok: true }
  /** gone: the address no longer exists (a Web Push subscription the push service dropped). */
  | { ok: false; retry: boolean; error: string; gone?: boolean };

/** One outbox entry as a channel sees it. */
export interface Delivery {
  /** The outbox row id. */
  id: number;
  /** Stable across attempts and restarts: receivers may drop a repeat by it (at-least-once). */
  dedupKey: string;
  channel: string;
  recipient: Recipient;
  /** E-mail address, Web Push endpoint, or the "to" passed on by a webhook or MQTT. */
  address: string | null;
  subject: string;
  text: string;
  fields: MessageFields;
}

export interface Channel {
  readonly id: string;
  readonly kind: ChannelKind;
  send(d: Delivery): Promise<SendResult>;
  close(): Promise<void>;
}

/** An error as short text, never with a stack. */
export function errorText(err: unknown): string {
  if (err instanceof Error) {
    const code = (err as { code?: unknown }).code;
    return typeof code === "string" && !err.message.includes(code) ? `${code}: ${err.message}` : err.message;
  }
  return String(err);
}

/** A stable short id from a dedup key (message ids, idempotency headers). */
export function shortHash(text: string): string {
  return createHash("sha256").update(text).digest("hex").slice(0, 32);
}
