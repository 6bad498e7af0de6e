// E-mail over SMTP (nodemailer): one plain-text message per delivery. TLS is implicit (465),
// STARTTLS required (587) or off (a loopback relay only); the password comes from the
// environment variable the config names. A 4xx reply or a lost connection is worth retrying,
// a 5xx reply (bad address, refused login) is not.
import { readFileSync } from "node:fs";
import nodemailer from "nodemailer";
import type { NotificationChannelConfig } from "../../config/sections/notifications.js";
import { errorText, shortHash, type Channel, type Delivery, type SendResult } from "./types.js";

type EmailConfig = Extract<NotificationChannelConfig, { kind: "email" }>;

/** The transport as this adapter uses it: a seam for tests, not for other transports. */
export interface MailTransport {
  sendMail(m: { from: string; to: string; subject: string; text: string; messageId: string; headers: Record<string, string> }): Promise<{ accepted?: unknown[]; rejected?: unknown[] }>;
  close(): void;
}

/** Codes of nodemailer errors that end a connection or time out: the next attempt may get through. */
const TRANSIENT_CODES = new Set(["ECONNECTION", "ETIMEDOUT", "ESOCKET", "EDNS", "ETLS", "EPROXY"]);

export class EmailChannel implements Channel {
  readonly kind = "email" as const;
  readonly id: string;
  private readonly transport: MailTransport;
  private readonly domain: string;

  constructor(
    private readonly cfg: EmailConfig,
    env: NodeJS.ProcessEnv,
    transport?: MailTransport,
  ) {
    this.id = cfg.id;
    const password = cfg.passwordEnv ? env[cfg.passwordEnv] : undefined;
    if (cfg.passwordEnv && !password) throw new Error(`notification channel "${cfg.id}": environment variable ${cfg.passwordEnv} (passwordEnv) is not set`);
    const ca = cfg.caFile ? readFileSync(cfg.caFile) : undefined;
    this.domain = /@([^>\s]+)>?\s*$/.exec(cfg.from)?.[1] ?? "millwarden.invalid";
    this.transport =
      transport ??
      (nodemailer.createTransport({
        host: cfg.host,
        port: cfg.port,
        secure: cfg.tls === "implicit",
        requireTLS: cfg.tls === "starttls",
        ignoreTLS: cfg.tls === "none",
        ...(cfg.username ? { auth: { user: cfg.username, pass: password! } } : {}),
        tls: { rejectUnauthorized: cfg.rejectUnauthorized, ...(ca ? { ca } : {}) },
        connectionTimeout: cfg.timeoutS * 1000,
        greetingTimeout: cfg.timeoutS * 1000,
        socketTimeout: cfg.timeoutS * 1000,
        logger: false,
        debug: false,
      }) as unknown as MailTransport);
  }

  async send(d: Delivery): Promise<SendResult> {
    if (!d.address) return { ok: false, retry: false, error: `no e-mail address for ${d.recipient.kind === "person" ? d.recipient.id : "the channel"}` };
    try {
      const info = await this.transport.sendMail({
        from: this.cfg.from,
        to: d.address,
        subject: d.subject,
        text: d.text,
        // The same entry always has the same Message-ID: a repeat after a crash can be told.
        messageId: `<${shortHash(d.dedupKey)}@${this.domain}>`,
        headers: { "X-Millwarden-Advisory-Only": "true", "X-Millwarden-Delivery": shortHash(d.dedupKey) },
      });
      if (Array.isArray(info.rejected) && info.rejected.length > 0) return { ok: false, retry: false, error: `the server refused the recipient ${d.address}` };
      return { ok: true };
    } catch (err) {
      const e = err as { code?: string; responseCode?: number; permanent?: boolean };
      const code = typeof e.responseCode === "number" ? e.responseCode : null;
      const retry = code !== null ? code < 500 : e.code === undefined || TRANSIENT_CODES.has(e.code);
      return { ok: false, retry, error: `SMTP ${this.cfg.host}:${this.cfg.port}: ${errorText(err)}` };
    }
  }

  async close(): Promise<void> {
    this.transport.close();
  }
}
