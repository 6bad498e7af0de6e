// Real receivers on loopback for the channel tests: an SMTP server (smtp-server), a webhook
// receiver that checks the signature, a Web Push service over HTTPS, and the browser's side of
// Web Push decryption written from the RFCs. All bind 127.0.0.1 on ephemeral ports.
import { createECDH, createDecipheriv, createHmac, createPublicKey, hkdfSync, randomBytes, timingSafeEqual, verify } from "node:crypto";
import { readFileSync } from "node:fs";
import http from "node:http";
import https from "node:https";
import type { AddressInfo } from "node:net";
import { join } from "node:path";
import { SMTPServer, type SMTPServerAuthentication } from "smtp-server";

export const FIXTURES = join(import.meta.dirname, "fixtures");
/** The self-signed loopback certificate (fixtures/README.md); tests trust it explicitly. */
export const TEST_CERT_FILE = join(FIXTURES, "loopback-test-cert.pem");
export const TEST_CERT = readFileSync(TEST_CERT_FILE);
export const TEST_KEY = readFileSync(join(FIXTURES, "loopback-test-key.pem"));

// ---- SMTP ----

export interface ReceivedMail {
  from: string;
  to: string[];
  raw: string;
  secure: boolean;
  user: string | null;
}

export interface SmtpOptions {
  /** Require this login (over TLS unless allowInsecureAuth). */
  login?: { user: string; pass: string };
  /** Offer STARTTLS with the test certificate. */
  tls?: boolean;
  /** Refuse a login with this text (an echoing server, to test redaction). */
  authFailureText?: (auth: SMTPServerAuthentication) => string;
  /** Refuse recipients with this SMTP code. */
  rcptCode?: number;
}

export async function startSmtp(o: SmtpOptions = {}) {
  const mails: ReceivedMail[] = [];
  const server = new SMTPServer({
    secure: false,
    ...(o.tls ? { key: TEST_KEY, cert: TEST_CERT } : { disabledCommands: ["STARTTLS"] }),
    authOptional: !o.login,
    allowInsecureAuth: !o.tls,
    authMethods: ["PLAIN", "LOGIN"],
    logger: false,
    onAuth(auth, _session, cb) {
      if (o.login && auth.username === o.login.user && auth.password === o.login.pass) return cb(null, { user: auth.username });
      const err = new Error(o.authFailureText ? o.authFailureText(auth) : "Invalid username or password") as Error & { responseCode: number };
      err.responseCode = 535;
      cb(err);
    },
    onRcptTo(_addr, _session, cb) {
      if (!o.rcptCode) return cb();
      const err = new Error(o.rcptCode >= 500 ? "no such mailbox here" : "try again later") as Error & { responseCode: number };
      err.responseCode = o.rcptCode;
      cb(err);
    },
    onData(stream, session, cb) {
      const chunks: Buffer[] = [];
      stream.on("data", (c: Buffer) => chunks.push(c));
      stream.on("end", () => {
        mails.push({
          from: session.envelope.mailFrom ? session.envelope.mailFrom.address : "",
          to: session.envelope.rcptTo.map((r) => r.address),
          raw: Buffer.concat(chunks).toString("utf8"),
          secure: session.secure,
          user: (session.user as string | undefined) ?? null,
        });
        cb();
      });
    },
  });
  await new Promise<void>((ok) => server.listen(0, "127.0.0.1", () => ok()));
  const port = (server.server.address() as AddressInfo).port;
  return { port, mails, close: () => new Promise<void>((ok) => server.close(() => ok())) };
}

/** Headers (unfolded, lower-case names) and the decoded text body of a single-part message. */
export function parseMail(raw: string): { headers: Record<string, string>; body: string } {
  const cut = raw.indexOf("\r\n\r\n");
  const head = raw.slice(0, cut).replace(/\r\n[ \t]+/g, " ");
  const headers: Record<string, string> = {};
  for (const line of head.split("\r\n")) {
    const i = line.indexOf(":");
    headers[line.slice(0, i).toLowerCase()] = line.slice(i + 1).trim();
  }
  let body = raw.slice(cut + 4);
  const cte = (headers["content-transfer-encoding"] ?? "7bit").toLowerCase();
  if (cte === "quoted-printable") {
    // RFC 2045 §6.7: "=" CRLF is a soft line break; "=XX" an octet.
    const bytes = body.replace(/=\r\n/g, "").replace(/=([0-9A-F]{2})/gi, (_m, h: string) => `%${h}`);
    body = decodeURIComponent(bytes.replace(/%(?![0-9A-F]{2})/gi, "%25"));
  } else if (cte === "base64") body = Buffer.from(body, "base64").toString("utf8");
  return { headers, body: body.replace(/\r\n/g, "\n") };
}

// ---- webhook ----

export interface ReceivedHook {
  headers: http.IncomingHttpHeaders;
  body: string;
  verified: boolean;
}

/**
 * A receiver that checks the signature as a site's would: HMAC-SHA256 (RFC 2104) with the shared
 * key over timestamp, a newline and the raw body, compared in constant time; a timestamp more than
 * 5 minutes from its clock is refused (a replayed request). 401 when the check fails.
 */
export async function startWebhookReceiver(key: string, opts: { nowS?: () => number; port?: number } = {}) {
  const received: ReceivedHook[] = [];
  let status = 204;
  const nowS = opts.nowS ?? (() => Math.floor(Date.now() / 1000));
  const server = http.createServer((req, res) => {
    const chunks: Buffer[] = [];
    req.on("data", (c: Buffer) => chunks.push(c));
    req.on("end", () => {
      const body = Buffer.concat(chunks).toString("utf8");
      const ts = Number(req.headers["x-millwarden-timestamp"]);
      const given = String(req.headers["x-millwarden-signature"] ?? "");
      const expected = `hmac-sha256=${createHmac("sha256", key).update(`${req.headers["x-millwarden-timestamp"]}\n${body}`).digest("hex")}`;
      const verified = given.length === expected.length && timingSafeEqual(Buffer.from(given), Buffer.from(expected)) && Number.isFinite(ts) && Math.abs(nowS() - ts) <= 300;
      received.push({ headers: req.headers, body, verified });
      res.statusCode = verified ? status : 401;
      res.end();
    });
  });
  await new Promise<void>((ok) => server.listen(opts.port ?? 0, "127.0.0.1", () => ok()));
  const port = (server.address() as AddressInfo).port;
  return {
    url: `http://127.0.0.1:${port}/millwarden`,
    port,
    received,
    setStatus: (s: number) => {
      status = s;
    },
    close: () => new Promise<void>((ok) => server.close(() => ok())),
  };
}

// ---- Web Push ----

export interface PushRequest {
  path: string;
  headers: http.IncomingHttpHeaders;
  body: Buffer;
}

/** A push service (RFC 8030) over HTTPS with the test certificate: it keeps what it is given and answers `status`. */
export async function startPushService() {
  const requests: PushRequest[] = [];
  let status = 201;
  const server = https.createServer({ key: TEST_KEY, cert: TEST_CERT }, (req, res) => {
    const chunks: Buffer[] = [];
    req.on("data", (c: Buffer) => chunks.push(c));
    req.on("end", () => {
      requests.push({ path: req.url ?? "", headers: req.headers, body: Buffer.concat(chunks) });
      res.statusCode = status;
      res.end();
    });
  });
  await new Promise<void>((ok) => server.listen(0, "127.0.0.1", () => ok()));
  const port = (server.address() as AddressInfo).port;
  return {
    origin: `https://127.0.0.1:${port}`,
    requests,
    agent: new https.Agent({ ca: TEST_CERT }),
    setStatus: (s: number) => {
      status = s;
    },
    close: () => new Promise<void>((ok) => server.close(() => ok())),
  };
}

/** A browser's subscription keys: a P-256 key pair and a 16-byte auth secret (RFC 8291 §2). */
export function browserKeys(): { privateKey: Buffer; p256dh: string; auth: string } {
  const ecdh = createECDH("prime256v1");
  ecdh.generateKeys();
  return { privateKey: ecdh.getPrivateKey(), p256dh: ecdh.getPublicKey().toString("base64url"), auth: randomBytes(16).toString("base64url") };
}

/**
 * The user agent's side of Web Push message encryption, written from RFC 8291 §3.3–3.4 and the
 * "aes128gcm" content coding of RFC 8188 §2 (one record):
 *   header  = salt (16) ‖ rs (uint32) ‖ idlen (1) ‖ keyid = as_public (65)
 *   ecdh_secret = ECDH(ua_private, as_public)
 *   IKM   = HKDF-SHA-256(salt = auth_secret, ikm = ecdh_secret, info = "WebPush: info" ‖ 0x00 ‖ ua_public ‖ as_public, L = 32)
 *   CEK   = HKDF-SHA-256(salt, IKM, "Content-Encoding: aes128gcm" ‖ 0x00, 16)
 *   NONCE = HKDF-SHA-256(salt, IKM, "Content-Encoding: nonce" ‖ 0x00, 12)  (record 0: XOR with 0)
 *   plaintext ‖ 0x02 ‖ zero padding = AES-128-GCM-decrypt(CEK, NONCE, record), tag the last 16 bytes.
 */
export function decryptAes128gcm(body: Buffer, uaPrivate: Buffer, authSecret: Buffer): Buffer {
  const salt = body.subarray(0, 16);
  const rs = body.readUInt32BE(16);
  const idlen = body[20]!;
  const asPublic = body.subarray(21, 21 + idlen);
  const record = body.subarray(21 + idlen);
  if (record.length > rs) throw new Error(`expected one record of at most rs = ${rs} bytes; found ${record.length}`);
  const ecdh = createECDH("prime256v1");
  ecdh.setPrivateKey(uaPrivate);
  const uaPublic = ecdh.getPublicKey();
  const secret = ecdh.computeSecret(asPublic);
  const info = Buffer.concat([Buffer.from("WebPush: info\0", "latin1"), uaPublic, asPublic]);
  const ikm = Buffer.from(hkdfSync("sha256", secret, authSecret, info, 32));
  const cek = Buffer.from(hkdfSync("sha256", ikm, salt, Buffer.from("Content-Encoding: aes128gcm\0", "latin1"), 16));
  const nonce = Buffer.from(hkdfSync("sha256", ikm, salt, Buffer.from("Content-Encoding: nonce\0", "latin1"), 12));
  const d = createDecipheriv("aes-128-gcm", cek, nonce);
  d.setAuthTag(record.subarray(record.length - 16));
  const padded = Buffer.concat([d.update(record.subarray(0, record.length - 16)), d.final()]);
  // RFC 8188 §2: the last record's padding starts with the delimiter 0x02, then zeros.
  let end = padded.length - 1;
  while (end >= 0 && padded[end] === 0) end--;
  if (padded[end] !== 2) throw new Error("expected the last-record padding delimiter 0x02");
  return padded.subarray(0, end);
}

/**
 * Checks a VAPID Authorization header (RFC 8292 §2–3): "vapid t=<JWT>, k=<public key>", the JWT
 * signed ES256 (RFC 7518 §3.4: r ‖ s, 64 bytes) with the key k, aud the push service's origin.
 */
export function checkVapid(header: string, expectPublicKey: string, origin: string, nowS: number): { sub: string; exp: number } {
  const m = /^vapid t=([\w-]+\.[\w-]+\.[\w-]+), k=([\w-]+)$/.exec(header);
  if (!m) throw new Error(`not a vapid Authorization header: ${header.slice(0, 20)}…`);
  const [, jwt, k] = m;
  if (k !== expectPublicKey) throw new Error("k is not the expected VAPID public key");
  const [h, p, s] = jwt!.split(".") as [string, string, string];
  const pub = Buffer.from(k!, "base64url");
  const key = createPublicKey({ key: { kty: "EC", crv: "P-256", x: pub.subarray(1, 33).toString("base64url"), y: pub.subarray(33, 65).toString("base64url") }, format: "jwk" });
  if (!verify("sha256", Buffer.from(`${h}.${p}`), { key, dsaEncoding: "ieee-p1363" }, Buffer.from(s, "base64url"))) throw new Error("the VAPID JWT signature does not verify");
  const header0 = JSON.parse(Buffer.from(h, "base64url").toString("utf8")) as { alg: string };
  const claims = JSON.parse(Buffer.from(p, "base64url").toString("utf8")) as { aud: string; exp: number; sub: string };
  if (header0.alg !== "ES256") throw new Error(`expected alg ES256; found ${header0.alg}`);
  if (claims.aud !== origin) throw new Error(`expected aud ${origin}; found ${claims.aud}`);
  if (!(claims.exp > nowS && claims.exp <= nowS + 24 * 3600)) throw new Error(`expected exp within 24 h; found ${claims.exp - nowS} s ahead`);
  return claims;
}
