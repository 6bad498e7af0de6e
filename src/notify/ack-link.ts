// Acknowledge links: a signed, expiring, single-use token in each notification about an
// advisory that can be acknowledged.
//
//   token = <outbox id>.<expiry ms>.<HMAC-SHA256(key, "ack1\n" outbox id \n advisory id \n recipient key \n expiry ms)>
//   link  = <linkBase>/ack.html#t=<token>
//
// - The token sits in the URL's fragment: a browser never sends a fragment to the server, so
//   it reaches neither the access log nor a proxy's. The page hands it over in a header (GET,
//   no side effect) or in the JSON body of the POST that acknowledges.
// - The key is made at the first run in the data folder (mode 0600) and never leaves it; a new
//   key invalidates every link sent before it.
// - The signature binds the outbox entry, so the server knows the channel and the recipient the
//   link was sent to; single use is the entry's row in notify_ack_links.
// - Signing takes the expiry as an argument (the entry's creation time + TTL): the same entry
//   gives the same link at every retry.
import { createHmac, randomBytes, timingSafeEqual } from "node:crypto";
import { chmodSync, existsSync, mkdirSync, readFileSync, renameSync, statSync, writeFileSync } from "node:fs";
import { dirname } from "node:path";

/** How long a link works: a shift and its handover (common practice for an on-call message). */
export const ACK_LINK_TTL_MS = 12 * 3600_000;

export interface AckLinkClaims {
  outboxId: number;
  expiresAtMs: number;
}

const TOKEN = /^([1-9][0-9]{0,15})\.([1-9][0-9]{0,15})\.([A-Za-z0-9_-]{43})$/;

export class AckLinkSigner {
  constructor(private readonly key: Buffer) {
    if (key.length < 32) throw new Error(`acknowledge link key: expected at least 32 bytes, found ${key.length}`);
  }

  private mac(outboxId: number, advisoryId: string, recipientKey: string, expiresAtMs: number): Buffer {
    return createHmac("sha256", this.key).update(`ack1\n${outboxId}\n${advisoryId}\n${recipientKey}\n${expiresAtMs}`).digest();
  }

  sign(outboxId: number, advisoryId: string, recipientKey: string, expiresAtMs: number): string {
    const exp = Math.trunc(expiresAtMs);
    return `${outboxId}.${exp}.${this.mac(outboxId, advisoryId, recipientKey, exp).toString("base64url")}`;
  }

  /** The token's claims if it is well formed (the signature is checked by verify, with the entry). */
  static parse(token: unknown): AckLinkClaims | null {
    if (typeof token !== "string") return null;
    const m = TOKEN.exec(token);
    if (!m) return null;
    const outboxId = Number(m[1]);
    const expiresAtMs = Number(m[2]);
    if (!Number.isSafeInteger(outboxId) || !Number.isSafeInteger(expiresAtMs)) return null;
    return { outboxId, expiresAtMs };
  }

  /** Whether the token was made by this key for this entry (constant-time compare). */
  verify(token: string, advisoryId: string, recipientKey: string): boolean {
    const c = AckLinkSigner.parse(token);
    if (c === null) return false;
    const sent = Buffer.from(token.slice(token.lastIndexOf(".") + 1), "base64url");
    const want = this.mac(c.outboxId, advisoryId, recipientKey, c.expiresAtMs);
    return sent.length === want.length && timingSafeEqual(sent, want);
  }
}

/** The link a notification carries. */
export function ackLinkUrl(linkBase: string, token: string): string {
  return `${linkBase.replace(/\/+$/, "")}/ack.html#t=${token}`;
}

/** Read the key from `file`, or make 32 random bytes and write them there (mode 0600). */
export function loadOrCreateAckLinkKey(file: string): { key: Buffer; created: boolean } {
  if (existsSync(file)) {
    const text = readFileSync(file, "utf8").trim();
    const key = /^[A-Za-z0-9_-]{43,}$/.test(text) ? Buffer.from(text, "base64url") : Buffer.alloc(0);
    if (key.length < 32) throw new Error(`acknowledge link key file ${file}: expected at least 32 bytes as base64url on one line; delete it to have a new key made (links sent before stop working)`);
    // A key others can read lets them forge acknowledgements: take the others' access away.
    if (process.platform !== "win32" && (statSync(file).mode & 0o077) !== 0) chmodSync(file, 0o600);
    return { key, created: false };
  }
  const key = randomBytes(32);
  mkdirSync(dirname(file), { recursive: true });
  const tmp = `${file}.${process.pid}.tmp`;
  writeFileSync(tmp, `${key.toString("base64url")}\n`, { mode: 0o600 });
  chmodSync(tmp, 0o600);
  renameSync(tmp, file);
  return { key, created: true };
}
