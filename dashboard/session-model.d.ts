// Types for session-model.js (plain JS in the browser, typed here for the tests).
import type { AccountRole } from "../src/store/accounts.js";

export interface SessionView {
  user: string | null;
  role: AccountRole | null;
  csrfToken?: string | null;
  expiresAtMs?: number | null;
  requireLoginForViews?: boolean;
}
export function commandAccess(session: SessionView | null, kind: "ack" | "reset" | "shelve" | "unshelve"): "login" | "allowed" | "not-allowed";
export function sessionText(session: SessionView | null): string;
export function loginBody(user: string | null | undefined, password: string | null | undefined): { body: { user: string; password: string }; error?: undefined } | { error: string; body?: undefined };
export function loginErrorText(status: number, body: { message?: string } | null, retryAfterS?: string | number | null): string;
