// The VAPID key pair (RFC 8292) that identifies this box to Web Push services: created at the
// first run and kept in the data folder, readable by the service's user only. The private key
// never leaves this file and the web-push library; the public key is what browsers subscribe with.
import { chmodSync, existsSync, mkdirSync, readFileSync, renameSync, writeFileSync } from "node:fs";
import { dirname } from "node:path";
import webpush from "web-push";

export interface VapidKeys {
  publicKey: string;
  privateKey: string;
}

const B64URL = /^[A-Za-z0-9_-]+$/;

function check(k: unknown, file: string): VapidKeys {
  const o = k as Partial<VapidKeys> | null;
  const pub = typeof o?.publicKey === "string" && B64URL.test(o.publicKey) ? Buffer.from(o.publicKey, "base64url") : null;
  const priv = typeof o?.privateKey === "string" && B64URL.test(o.privateKey) ? Buffer.from(o.privateKey, "base64url") : null;
  // An uncompressed P-256 point is 65 bytes starting 0x04; the private scalar 32 bytes.
  if (!pub || pub.length !== 65 || pub[0] !== 4 || !priv || priv.length !== 32)
    throw new Error(`VAPID key file ${file}: expected {"publicKey": <65-byte P-256 point, base64url>, "privateKey": <32 bytes, base64url>}; delete it to have a new pair made (browsers must then subscribe again)`);
  return { publicKey: o!.publicKey!, privateKey: o!.privateKey! };
}

/** Read the key pair from `file`, or make one and write it there (mode 0600). */
export function loadOrCreateVapidKeys(file: string): { keys: VapidKeys; created: boolean } {
  if (existsSync(file)) {
    let parsed: unknown;
    try {
      parsed = JSON.parse(readFileSync(file, "utf8"));
    } catch (err) {
      throw new Error(`VAPID key file ${file}: not readable as JSON (${(err as Error).message.split("\n")[0]})`, { cause: err });
    }
    return { keys: check(parsed, file), created: false };
  }
  const keys = webpush.generateVAPIDKeys();
  mkdirSync(dirname(file), { recursive: true });
  const tmp = `${file}.${process.pid}.tmp`;
  writeFileSync(tmp, `${JSON.stringify({ publicKey: keys.publicKey, privateKey: keys.privateKey }, null, 2)}\n`, { mode: 0o600 });
  chmodSync(tmp, 0o600);
  renameSync(tmp, file);
  return { keys: check(keys, file), created: true };
}
