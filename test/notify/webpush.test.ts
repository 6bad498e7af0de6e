// Web Push to a local HTTPS push service: the payload is decrypted here with the subscription's
// keys (RFC 8291 message encryption, RFC 8188 aes128gcm content coding), the VAPID signature
// checked (RFC 8292), and the push service's answers handled (RFC 8030).
import { mkdtempSync, rmSync, statSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { notificationsSchema } from "../../src/config/sections/notifications.js";
import type { Delivery } from "../../src/notify/channels/types.js";
import { WebPushChannel, type PushPayload } from "../../src/notify/channels/webpush.js";
import { makeFields, subjectOf, textOf } from "../../src/notify/message.js";
import { loadOrCreateVapidKeys } from "../../src/notify/vapid.js";
import { browserKeys, checkVapid, decryptAes128gcm, startPushService } from "./receivers.js";
import { notificationsInput } from "./helpers.js";

const T0 = Date.UTC(2026, 0, 6, 9);

describe("the decryption written from RFC 8291 (checked against its Appendix A example)", () => {
  it("recovers the RFC's plaintext from the RFC's encrypted body", () => {
    // RFC 8291 Appendix A: the user agent's private key, its auth secret and the message body.
    const uaPrivate = Buffer.from("q1dXpw3UpT5VOmu_cf_v6ih07Aems3njxI-JWgLcM94", "base64url");
    const auth = Buffer.from("BTBZMqHH6r4Tts7J_aSIgg", "base64url");
    const body = Buffer.from(
      "DGv6ra1nlYgDCS1FRnbzlwAAEABBBP4z9KsN6nGRTbVYI_c7VJSPQTBtkgcy27mlmlMoZIIgDll6e3vCYLocInmYWAmS6TlzAC8wEqKK6PBru3jl7A_yl95bQpu6cVPTpK4Mqgkf1CXztLVBSt2Ks3oZwbuwXPXLWyouBWLVWGNWQexSgSxsj_Qulcy4a-fN",
      "base64url",
    );
    expect(decryptAes128gcm(body, uaPrivate, auth).toString("utf8")).toBe("When I grow up, I want to be a watermelon");
    // A changed byte fails the GCM tag.
    const tampered = Buffer.from(body);
    tampered[tampered.length - 20]! ^= 1;
    expect(() => decryptAes128gcm(tampered, uaPrivate, auth)).toThrow();
  });
});

describe("WebPushChannel against a local push service", () => {
  let push: Awaited<ReturnType<typeof startPushService>>;
  let dir: string;
  beforeAll(async () => {
    push = await startPushService();
    dir = mkdtempSync(join(tmpdir(), "millwarden-push-"));
  });
  afterAll(async () => {
    await push.close();
    rmSync(dir, { recursive: true, force: true });
  });

  const cfg = notificationsSchema.parse(notificationsInput()).channels.find((c) => c.kind === "webpush")!;
  if (cfg.kind !== "webpush") throw new Error("expected the webpush channel");

  function delivery(endpoint: string): Delivery {
    const fields = makeFields({
      kind: "advisory",
      tier: "warning",
      site: "Tarnholm Works",
      plant: "Coal grinding line 2",
      advisoryId: "o2-margin-vm2",
      headline: "O2 margin at the mill outlet",
      unit: { id: "vm2", name: "Vertical roller mill 2" },
      indicator: "O2 margin",
      value: 0.4,
      valueUnit: "%-pt",
      limit: 1,
      direction: "low",
      atMs: T0,
      timeZone: "Europe/Berlin",
      linkBase: "https://millwarden.tarnholm.example",
    });
    return { id: 1, dedupKey: "o2-margin-vm2@1:raise|person:anna#x|push", channel: "push", recipient: { kind: "person", id: "anna", name: "Anna Berg", address: endpoint }, address: endpoint, subject: subjectOf(fields), text: textOf(fields), fields };
  }

  it("makes the VAPID key pair once, readable by the owner only, and reads it back", () => {
    const file = join(dir, "vapid.json");
    const a = loadOrCreateVapidKeys(file);
    expect(a.created).toBe(true);
    expect(statSync(file).mode & 0o777).toBe(0o600);
    const b = loadOrCreateVapidKeys(file);
    expect(b).toEqual({ keys: a.keys, created: false });
    expect(Buffer.from(a.keys.publicKey, "base64url")).toHaveLength(65);
  });

  it("sends an aes128gcm payload that the subscription's keys decrypt, with a valid VAPID signature", async () => {
    const { keys: vapid } = loadOrCreateVapidKeys(join(dir, "vapid.json"));
    const browser = browserKeys();
    const endpoint = `${push.origin}/push/anna-phone`;
    const ch = new WebPushChannel(cfg, vapid, () => ({ p256dh: browser.p256dh, auth: browser.auth }), () => undefined, push.agent);
    const d = delivery(endpoint);
    expect(await ch.send(d)).toEqual({ ok: true });
    const req = push.requests.at(-1)!;
    expect(req.path).toBe("/push/anna-phone");
    expect(req.headers["content-encoding"]).toBe("aes128gcm");
    expect(req.headers.ttl).toBe("3600");
    // RFC 8030 §5.3: a warning asks for high urgency.
    expect(req.headers.urgency).toBe("high");
    const claims = checkVapid(String(req.headers.authorization), vapid.publicKey, push.origin, Math.floor(Date.now() / 1000));
    expect(claims.sub).toBe("mailto:ops@tarnholm.example");
    const payload = JSON.parse(decryptAes128gcm(req.body, browser.privateKey, Buffer.from(browser.auth, "base64url")).toString("utf8")) as PushPayload;
    expect(payload).toMatchObject({ title: d.subject, url: "https://millwarden.tarnholm.example/#advisory=o2-margin-vm2", tier: "warning", advisoryId: "o2-margin-vm2", atMs: T0 });
    expect(payload.body).toBe("vm2 · O2 margin 0.40 %-pt (limit 1.00 %-pt) · 2026-01-06 10:00:00 CET. Advisory only.");
    expect(payload.advisoryOnly).toMatch(/Advisory only/);
  });

  it("a subscription the push service says is gone (410) is dropped and not retried; 429 and 5xx are retried; other 4xx not", async () => {
    const { keys: vapid } = loadOrCreateVapidKeys(join(dir, "vapid.json"));
    const browser = browserKeys();
    const gone: string[] = [];
    const ch = new WebPushChannel(cfg, vapid, () => ({ p256dh: browser.p256dh, auth: browser.auth }), (e) => gone.push(e), push.agent);
    const endpoint = `${push.origin}/push/old-phone`;
    try {
      push.setStatus(410);
      expect(await ch.send(delivery(endpoint))).toMatchObject({ ok: false, retry: false, gone: true });
      expect(gone).toEqual([endpoint]);
      push.setStatus(429);
      expect(await ch.send(delivery(endpoint))).toMatchObject({ ok: false, retry: true, error: `Web Push ${push.origin}: HTTP 429` });
      push.setStatus(503);
      expect(await ch.send(delivery(endpoint))).toMatchObject({ ok: false, retry: true });
      push.setStatus(400);
      expect(await ch.send(delivery(endpoint))).toMatchObject({ ok: false, retry: false });
    } finally {
      push.setStatus(201);
    }
  });

  it("a push service that cannot be reached is retried; a person without a browser subscribed is not", async () => {
    const { keys: vapid } = loadOrCreateVapidKeys(join(dir, "vapid.json"));
    const browser = browserKeys();
    const ch = new WebPushChannel(cfg, vapid, () => ({ p256dh: browser.p256dh, auth: browser.auth }), () => undefined, push.agent);
    expect(await ch.send(delivery("https://127.0.0.1:9/push/x"))).toMatchObject({ ok: false, retry: true });
    const none = { ...delivery(""), address: null };
    expect(await ch.send(none)).toEqual({ ok: false, retry: false, error: "anna has no browser subscribed to Web Push" });
  });
});
