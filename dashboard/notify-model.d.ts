import type { HealthView, NotificationsHealth } from "../src/server/deps.js";
import type { DeliveryLogRow } from "../src/store/outbox.js";

export function notificationsLine(n: NotificationsHealth | undefined, clock: (ms: number) => string): string | null;

export function boxHealthLine(h: HealthView | undefined): string | null;

export interface DeliveryRowText {
  time: string;
  channel: string;
  recipient: string;
  what: string;
  attempt: string;
  outcome: string;
  error: string;
  durationMs: string;
  abnormal: boolean;
}

export function deliveryRows(rows: Pick<DeliveryLogRow, "atMs" | "channel" | "recipient" | "kind" | "tier" | "advisoryId" | "attempt" | "outcome" | "error" | "durationMs" | "entryState">[], clock: (ms: number) => string): DeliveryRowText[];
