// Acknowledge links: the signature (HMAC-SHA256, RFC 2104 / FIPS 180-4, computed here apart
// from the code under test), tampering, expiry, single use, the key file, and a link that stops
// the escalation on a simulated core clock. Invented people of Tarnholm Works, line 2.
import { createHmac } from "node:crypto";
import { readFileSync, statSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { afterEach, beforeEach, describe, expect, it } from "vitest";
import { parseConfig } from "../../src/config/load.js";
import type { MillwardenConfig } from "../../src/config/schema.js";
import { memoryLogger } from "../../src/daemon/log.js";
import { ACK_LINK_TTL_MS, AckLinkSigner, ackLinkUrl, loadOrCreateAckLinkKey } from "../../src/notify/ack-link.js";
import { NotifyService, seededRandom } from "../../src/notify/service.js";
import { Historian } from "../../src/store/historian.js";
import { SITE_AND_SOURCE } from "../config/helpers.js";
import { tempDir } from "../store/helpers.js";
import { tr } from "./helpers.js";
import { parseMail, startSmtp } from "./receivers.js";

const KEY = Buffer.alloc(32, 7);
const T0 = Date.UTC(2026, 0, 6, 9); // Tuesday 10:00 CET: Anna primary, Jonas secondary, Mira supervisor
const S = 1000;

/** The token as ack-link.ts documents it, computed with Node's HMAC directly. */
function expectedToken(key: Buffer, outboxId: number, advisoryId: string, recipient: string, expMs: number): string {
  const mac = createHmac("sha256", key).update(`ack1\n${outboxId}\n${advisoryId}\n${recipient}\n${expMs}`).digest("base64url");
  return `${outboxId}.${expMs}.${mac}`;
}

describe("AckLinkSigner", () => {
  const signer = new AckLinkSigner(KEY);
  const exp = Date.UTC(2026, 0, 6, 21);

  it("signs outbox id, advisory, recipient and expiry with HMAC-SHA256 as documented", () => {
    const t = signer.sign(42, "o2-high-vm2", "person:anna", exp);
    expect(t).toBe(expectedToken(KEY, 42, "o2-high-vm2", "person:anna", exp));
    expect(AckLinkSigner.parse(t)).toEqual({ outboxId: 42, expiresAtMs: exp });
    expect(signer.verify(t, "o2-high-vm2", "person:anna")).toBe(true);
    expect(ackLinkUrl("https://millwarden.tarnholm.example/", t)).toBe(`https://millwarden.tarnholm.example/ack.html#t=${t}`);
  });

  it("refuses every tampered part: entry, expiry, advisory, recipient, signature, another key", () => {
    const t = signer.sign(42, "o2-high-vm2", "person:anna", exp);
    const [id, e, mac] = t.split(".") as [string, string, string];
    expect(signer.verify(`43.${e}.${mac}`, "o2-high-vm2", "person:anna")).toBe(false);
    expect(signer.verify(`${id}.${exp + 3_600_000}.${mac}`, "o2-high-vm2", "person:anna")).toBe(false);
    expect(signer.verify(t, "co-gradient-bf2", "person:anna")).toBe(false);
    expect(signer.verify(t, "o2-high-vm2", "person:jonas")).toBe(false);
    const flipped = `${id}.${e}.${mac[0] === "A" ? "B" : "A"}${mac.slice(1)}`;
    expect(signer.verify(flipped, "o2-high-vm2", "person:anna")).toBe(false);
    expect(new AckLinkSigner(Buffer.alloc(32, 8)).verify(t, "o2-high-vm2", "person:anna")).toBe(false);
  });

  it("parses only well-formed tokens", () => {
    for (const bad of ["", "42", "42.1", `0.${exp}.${"A".repeat(43)}`, `42.${exp}.${"A".repeat(42)}`, `42.${exp}.${"A".repeat(43)}=`, `x.${exp}.${"A".repeat(43)}`, 42, null]) {
      expect(AckLinkSigner.parse(bad)).toBeNull();
    }
    expect(() => new AckLinkSigner(Buffer.alloc(16))).toThrow(/at least 32 bytes, found 16/);
  });
});

describe("the acknowledge link key file", () => {
  let dir: string;
  let cleanup: () => void;
  beforeEach(() => ({ dir, cleanup } = tempDir()));
  afterEach(() => cleanup());

  it("is made once, mode 0600, and read back the same", () => {
    const file = join(dir, "data", "ack-link.key");
    const a = loadOrCreateAckLinkKey(file);
    expect(a.created).toBe(true);
    expect(a.key).toHaveLength(32);
    expect(statSync(file).mode & 0o777).toBe(0o600);
    const b = loadOrCreateAckLinkKey(file);
    expect(b.created).toBe(false);
    expect(b.key.equals(a.key)).toBe(true);
  });

  it("a damaged file is refused with what was expected", () => {
    const file = join(dir, "ack-link.key");
    writeFileSync(file, "short\n", { mode: 0o600 });
    expect(() => loadOrCreateAckLinkKey(file)).toThrow(/ack-link\.key: expected at least 32 bytes as base64url on one line/);
  });
});

const PLANT = `${SITE_AND_SOURCE}signals:
  - { id: vm2.o2, name: Mill outlet O2, tag: VM2-AT-113, source: m, topic: t/o2, unit: pctVol, expectedPeriodS: 1 }
units:
  - { id: vm2, name: Vertical roller mill 2, kind: mill }
rules:
  - { id: o2-high-vm2, title: O2 high at the mill outlet, unit: vm2, quantity: vm2.o2, direction: high, tiers: { caution: 9, warning: 10 }, cause: c, consequence: c, check: c, origin: demo value }
`;

function config(smtpPort: number): MillwardenConfig {
  return parseConfig(
    `${PLANT}notifications:
  timeZone: Europe/Berlin
  linkBase: https://millwarden.tarnholm.example
  channels:
    - { id: mail, kind: email, host: 127.0.0.1, port: ${smtpPort}, tls: none, from: "millwarden <millwarden@tarnholm.example>", timeoutS: 5 }
    - { id: hook, kind: webhook, url: "http://127.0.0.1:9/hook", secretEnv: MW_HOOK_KEY, timeoutS: 1 }
  people:
    - { id: anna, name: Anna Berg, contacts: [{ channel: mail, address: anna.berg@tarnholm.example }] }
    - { id: jonas, name: Jonas Lind, contacts: [{ channel: mail, address: jonas.lind@tarnholm.example }] }
    - { id: mira, name: Mira Holt, contacts: [{ channel: mail, address: mira.holt@tarnholm.example }] }
  rosters:
    - { id: process, rotation: { startsAt: "2026-01-05T07:00", weeks: [{ primary: anna, secondary: jonas }] }, supervisor: mira }
  routes:
    - { tiers: [caution, warning], roster: process, channels: [hook] }
  escalation: { afterS: 600 }
`,
    "plant.yaml",
  );
}

describe("acknowledge links from the notification service", () => {
  let dir: string;
  let cleanup: () => void;
  let historian: Historian;
  let wall: number;
  let service: NotifyService | null = null;
  beforeEach(() => {
    ({ dir, cleanup } = tempDir());
    historian = Historian.open({ path: join(dir, "millwarden.db") });
    wall = T0 + 5 * S;
  });
  afterEach(async () => {
    await service?.stop();
    service = null;
    historian.close();
    cleanup();
  });

  const tokenIn = (text: string): string => /Acknowledge: https:\/\/millwarden\.tarnholm\.example\/ack\.html#t=(\S+)/.exec(text)![1]!;

  it("each mail about an advisory carries its own link; the token is in no stored row and no log line", async () => {
    const smtp = await startSmtp();
    try {
      const log = memoryLogger();
      service = NotifyService.create({ config: config(smtp.port), historianPath: historian.path, log, now: () => wall, advisories: () => [], random: seededRandom(1), env: { MW_HOOK_KEY: "hook-secret-Zr81mWq2" } });
      service.record([tr("o2-high-vm2", "raise", T0, { tier: "warning", value: 10.4, limit: 10 })], T0);
      await service.deliverNow();
      const body = parseMail(smtp.mails[0]!.raw).body;
      const token = tokenIn(body);
      const entry = service.outbox.entries({ channel: "mail" })[0]!;
      const key = Buffer.from(readFileSync(join(dir, "ack-link.key"), "utf8").trim(), "base64url");
      expect(token).toBe(expectedToken(key, entry.id, "o2-high-vm2", entry.recipientKey, entry.createdAtMs + ACK_LINK_TTL_MS));
      expect(statSync(join(dir, "ack-link.key")).mode & 0o777).toBe(0o600);
      const sig = token.split(".")[2]!;
      expect(JSON.stringify(service.outbox.entries())).not.toContain(sig);
      expect(JSON.stringify(service.outbox.deliveries())).not.toContain(sig);
      expect(log.lines.join("\n")).not.toContain(sig);
      expect(readFileSync(historian.path).includes(Buffer.from(sig))).toBe(false);
      expect(service.inspectAckLink(token)).toMatchObject({ ok: true, advisoryId: "o2-high-vm2", channel: "mail", channelKind: "email", personId: "anna" });
    } finally {
      await smtp.close();
    }
  });

  it("works once (409 after), refuses a tampered token (404), and expires (410)", async () => {
    const smtp = await startSmtp();
    try {
      service = NotifyService.create({ config: config(smtp.port), historianPath: historian.path, log: memoryLogger(), now: () => wall, advisories: () => [], random: seededRandom(1), env: { MW_HOOK_KEY: "hook-secret-Zr81mWq2" }, ackLinkTtlMs: 3600_000 });
      service.record([tr("o2-high-vm2", "raise", T0, { tier: "warning" })], T0);
      await service.deliverNow();
      const token = tokenIn(parseMail(smtp.mails[0]!.raw).body);
      const [id, exp, mac] = token.split(".") as [string, string, string];
      expect(service.inspectAckLink(`${id}.${Number(exp) + 1}.${mac}`)).toMatchObject({ ok: false, status: 404 });
      expect(service.inspectAckLink(`${Number(id) + 1}.${exp}.${mac}`)).toMatchObject({ ok: false, status: 404 });
      expect(service.useAckLink(token, "anna")).toMatchObject({ ok: true });
      const again = service.useAckLink(token, "jonas");
      expect(again).toMatchObject({ ok: false, status: 409 });
      expect(again.ok ? "" : again.error).toMatch(/used already, by anna at 2026-01-06T09:00:05\.000Z; each link works once/);
      expect(service.inspectAckLink(token)).toMatchObject({ ok: false, status: 409 });

      // Another raise, another entry; an hour later its link has expired.
      service.record([tr("o2-high-vm2", "raise", T0 + 60 * S, { tier: "caution" })], T0 + 60 * S);
      await service.deliverNow();
      const second = tokenIn(parseMail(smtp.mails.at(-1)!.raw).body);
      expect(second).not.toBe(token);
      wall = T0 + 5 * S + 3600_000 - 1;
      expect(service.inspectAckLink(second)).toMatchObject({ ok: true });
      wall += 1;
      const gone = service.inspectAckLink(second);
      expect(gone).toMatchObject({ ok: false, status: 410 });
      expect(gone.ok ? "" : gone.error).toMatch(/expired at 2026-01-06T10:00:05\.000Z/);
    } finally {
      await smtp.close();
    }
  });

  it("acknowledging by link stops the escalation: nobody else is paged after 10 min (simulated core clock)", async () => {
    const smtp = await startSmtp();
    try {
      service = NotifyService.create({ config: config(smtp.port), historianPath: historian.path, log: memoryLogger(), now: () => wall, advisories: () => [], random: seededRandom(1), env: { MW_HOOK_KEY: "hook-secret-Zr81mWq2" } });
      service.record([tr("o2-high-vm2", "raise", T0, { tier: "warning" })], T0);
      await service.deliverNow();
      expect(smtp.mails.map((m) => m.to[0])).toEqual(["anna.berg@tarnholm.example"]);
      const token = tokenIn(parseMail(smtp.mails[0]!.raw).body);
      expect(service.notifier.activeEpisodes()).toHaveLength(1);
      const r = service.useAckLink(token, "anna");
      expect(r.ok).toBe(true);
      service.acknowledge({ advisoryId: "o2-high-vm2", by: "anna", atMs: T0 + 120 * S });
      expect(service.notifier.activeEpisodes()).toHaveLength(0);
      service.tick(T0 + 600 * S);
      service.tick(T0 + 1200 * S);
      await service.deliverNow();
      expect(smtp.mails.map((m) => m.to[0])).not.toContain("jonas.lind@tarnholm.example");
      expect(smtp.mails.map((m) => m.to[0])).not.toContain("mira.holt@tarnholm.example");
    } finally {
      await smtp.close();
    }
  });
});
