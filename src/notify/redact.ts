// Secrets (the SMTP and MQTT passwords, the webhook key, the VAPID private key) must never reach
// a log line, an error text or the outbox. Adapters write their own error texts without them;
// every text on its way out passes through redact() as well, in case a receiver echoes one.

const MIN_SECRET_CHARS = 4;

export class Redactor {
  private readonly forms = new Set<string>();

  /** Remember a secret, in the forms it could appear in: as is, URL-encoded, base64 and base64url. */
  add(secret: string | null | undefined): void {
    if (!secret || secret.length < MIN_SECRET_CHARS) return;
    const b = Buffer.from(secret, "utf8");
    for (const f of [secret, encodeURIComponent(secret), b.toString("base64"), b.toString("base64url"), b.toString("base64").replace(/=+$/, "")]) {
      if (f.length >= MIN_SECRET_CHARS) this.forms.add(f);
    }
  }

  redact(text: string): string {
    let out = text;
    // Longest first, so that a form containing another is replaced whole.
    for (const f of [...this.forms].sort((a, b) => b.length - a.length)) out = out.split(f).join("[redacted]");
    return out;
  }
}

/** A URL for messages: scheme, host and port only (a path or query may carry a token). */
export function originOf(url: string): string {
  try {
    const u = new URL(url);
    return `${u.protocol}//${u.host}`;
  } catch {
    return "(unparsable URL)";
  }
}
