// Password hashing with Node's crypto.scrypt (RFC 7914). The stored text carries everything
// needed to check it later, so the parameters can be raised without breaking old hashes:
//
//   scrypt$<log2 N>$<r>$<p>$<salt, base64url>$<key, base64url>
//
// Default cost: N = 2^15, r = 8, p = 3, a 16-byte random salt per user, a 32-byte key. That is
// one of the equivalent scrypt settings OWASP's password storage guidance lists (from memory);
// it needs 32 MiB (128·N·r bytes, RFC 7914 §6) and about a quarter of a second here, off the
// event loop (libuv's thread pool). The comparison is constant-time (crypto.timingSafeEqual).
import { randomBytes, scrypt, timingSafeEqual, type ScryptOptions } from "node:crypto";

export interface ScryptParams {
  /** log2 of the CPU/memory cost N. */
  logN: number;
  r: number;
  p: number;
}

export const DEFAULT_SCRYPT: ScryptParams = { logN: 15, r: 8, p: 3 };
const SALT_BYTES = 16;
const KEY_BYTES = 32;

/** Common practice; long passphrases are welcome (the upper bound only keeps requests small). */
export const PASSWORD_MIN_CHARS = 12;
export const PASSWORD_MAX_CHARS = 256;

// Bounds on what a stored hash may ask for: a tampered row must not make a login cost minutes.
const LOG_N_RANGE = [10, 20] as const;
const R_RANGE = [1, 32] as const;
const P_RANGE = [1, 16] as const;

function derive(password: string, salt: Buffer, keyLen: number, prm: ScryptParams): Promise<Buffer> {
  const N = 2 ** prm.logN;
  // Node refuses when 128·N·r exceeds maxmem (32 MiB by default): leave room above it.
  const opts: ScryptOptions = { N, r: prm.r, p: prm.p, maxmem: 256 * N * prm.r };
  return new Promise((resolve, reject) => {
    scrypt(password.normalize("NFC"), salt, keyLen, opts, (err, key) => (err ? reject(err) : resolve(key)));
  });
}

/** Why a password cannot be used, or null. Never repeats the password. */
export function passwordProblem(password: string): string | null {
  const n = [...password].length;
  if (n < PASSWORD_MIN_CHARS) return `password: expected at least ${PASSWORD_MIN_CHARS} characters, found ${n}`;
  if (n > PASSWORD_MAX_CHARS) return `password: expected at most ${PASSWORD_MAX_CHARS} characters, found ${n}`;
  return null;
}

export async function hashPassword(password: string, prm: ScryptParams = DEFAULT_SCRYPT): Promise<string> {
  checkParams(prm, "hashPassword");
  const salt = randomBytes(SALT_BYTES);
  const key = await derive(password, salt, KEY_BYTES, prm);
  return ["scrypt", prm.logN, prm.r, prm.p, salt.toString("base64url"), key.toString("base64url")].join("$");
}

interface Parsed extends ScryptParams {
  salt: Buffer;
  key: Buffer;
}

function parseHash(stored: string): Parsed | null {
  const parts = stored.split("$");
  if (parts.length !== 6 || parts[0] !== "scrypt") return null;
  const [logN, r, p] = parts.slice(1, 4).map((x) => (/^\d{1,3}$/.test(x ?? "") ? Number(x) : Number.NaN)) as [number, number, number];
  const inRange = (v: number, [lo, hi]: readonly [number, number]) => Number.isInteger(v) && v >= lo && v <= hi;
  if (!inRange(logN, LOG_N_RANGE) || !inRange(r, R_RANGE) || !inRange(p, P_RANGE)) return null;
  const salt = Buffer.from(parts[4] ?? "", "base64url");
  const key = Buffer.from(parts[5] ?? "", "base64url");
  if (salt.length < 8 || key.length < 16 || key.length > 64) return null;
  return { logN, r, p, salt, key };
}

/** True when `password` matches the stored hash; false for a wrong password or an unreadable hash. */
export async function verifyPassword(password: string, stored: string): Promise<boolean> {
  const h = parseHash(stored);
  if (h === null) return false;
  const key = await derive(password, h.salt, h.key.length, h);
  return timingSafeEqual(key, h.key);
}

/**
 * A hash of a random password, made once: logins for names that have no account are checked
 * against it, so that they take as long as real ones and the answer time does not tell which
 * names exist.
 */
let dummy: Promise<string> | null = null;
export function dummyHash(prm: ScryptParams = DEFAULT_SCRYPT): Promise<string> {
  dummy ??= hashPassword(randomBytes(24).toString("base64url"), prm);
  return dummy;
}

/** The cost recorded in a stored hash (for `user list` and tests), or null when unreadable. */
export function hashParams(stored: string): ScryptParams | null {
  const h = parseHash(stored);
  return h === null ? null : { logN: h.logN, r: h.r, p: h.p };
}

function checkParams(prm: ScryptParams, where: string): void {
  const ok = (v: number, [lo, hi]: readonly [number, number]) => Number.isInteger(v) && v >= lo && v <= hi;
  if (!ok(prm.logN, LOG_N_RANGE) || !ok(prm.r, R_RANGE) || !ok(prm.p, P_RANGE)) {
    throw new RangeError(`${where}: expected scrypt logN ${LOG_N_RANGE.join("–")}, r ${R_RANGE.join("–")}, p ${P_RANGE.join("–")}, found ${JSON.stringify(prm)}`);
  }
}
