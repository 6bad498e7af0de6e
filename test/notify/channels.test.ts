// The e-mail, webhook and MQTT channels against real receivers on loopback: smtp-server (with
// STARTTLS and a login), an HTTP receiver that verifies the HMAC signature, and an MQTT broker
// (aedes) in the process.
import net from "node:net";
import { Aedes } from "aedes";
import mqtt from "mqtt";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { notificationChannel, type NotificationChannelConfig } from "../../src/config/sections/notifications.js";
import { EmailChannel } from "../../src/notify/channels/email.js";
import { MqttChannel } from "../../src/notify/channels/mqtt.js";
import { shortHash, type Delivery } from "../../src/notify/channels/types.js";
import { WebhookChannel, webhookSignature } from "../../src/notify/channels/webhook.js";
import { makeFields, subjectOf, textOf } from "../../src/notify/message.js";
import { parseMail, startSmtp, startWebhookReceiver, TEST_CERT_FILE } from "./receivers.js";

const T0 = Date.UTC(2026, 0, 6, 9);
const SMTP_PASSWORD = "smtp-Pa55word-for-tests";
const HOOK_KEY = "hook-key-5e1c4d2a9b";

function delivery(address: string | null = "anna.berg@tarnholm.example"): Delivery {
  const fields = makeFields({
    kind: "advisory",
    tier: "warning",
    site: "Tarnholm Works",
    plant: "Coal grinding line 2",
    advisoryId: "dewpoint-bf2",
    headline: "Dew point margin at the filter outlet",
    unit: { id: "bf2", name: "Bag filter 2" },
    indicator: "Bag filter outlet dew point margin",
    quantity: "dewpoint.bf2-outlet.marginK",
    value: 4.2,
    valueUnit: "K",
    limit: 5,
    direction: "low",
    trend: { label: "margin trend", value: -0.31, unit: "K/min" },
    why: "margin 4.2 K reached the warning threshold 5.0 K",
    atMs: T0,
    timeZone: "Europe/Berlin",
    linkBase: "https://millwarden.tarnholm.example",
  });
  return {
    id: 7,
    dedupKey: `dewpoint-bf2@${T0}:raise|person:anna|mail`,
    channel: "mail",
    recipient: { kind: "person", id: "anna", name: "Anna Berg", address },
    address,
    subject: subjectOf(fields),
    text: textOf(fields),
    fields,
  };
}

const channel = <K extends NotificationChannelConfig["kind"]>(c: Record<string, unknown>) => notificationChannel.parse(c) as Extract<NotificationChannelConfig, { kind: K }>;

describe("e-mail over SMTP (smtp-server on loopback)", () => {
  it("delivers over STARTTLS with a login: the recipient, the subject and the plain-text body arrive as sent", async () => {
    const smtp = await startSmtp({ tls: true, login: { user: "millwarden", pass: SMTP_PASSWORD } });
    const cfg = channel<"email">({ id: "mail", kind: "email", host: "127.0.0.1", port: smtp.port, tls: "starttls", caFile: TEST_CERT_FILE, username: "millwarden", passwordEnv: "MW_SMTP_PASSWORD", from: "millwarden <millwarden@tarnholm.example>" });
    const ch = new EmailChannel(cfg, { MW_SMTP_PASSWORD: SMTP_PASSWORD });
    try {
      const d = delivery();
      expect(await ch.send(d)).toEqual({ ok: true });
      expect(smtp.mails).toHaveLength(1);
      const mail = smtp.mails[0]!;
      expect(mail.secure).toBe(true);
      expect(mail.user).toBe("millwarden");
      expect(mail.from).toBe("millwarden@tarnholm.example");
      expect(mail.to).toEqual(["anna.berg@tarnholm.example"]);
      const { headers, body } = parseMail(mail.raw);
      expect(headers.subject).toBe("[millwarden] WARNING bf2 Dew point margin at the filter outlet (advisory only)");
      expect(headers["content-type"]).toMatch(/^text\/plain/);
      expect(headers["message-id"]).toBe(`<${shortHash(d.dedupKey)}@tarnholm.example>`);
      expect(headers["x-millwarden-advisory-only"]).toBe("true");
      expect(body.trimEnd()).toBe(d.text.trimEnd());
      expect(body).toContain("Trend:      margin trend -0.31 K/min");
    } finally {
      await ch.close();
      await smtp.close();
    }
  });

  it("refuses a server certificate it cannot verify (no silent fall-back to plain text)", async () => {
    const smtp = await startSmtp({ tls: true });
    const cfg = channel<"email">({ id: "mail", kind: "email", host: "127.0.0.1", port: smtp.port, tls: "starttls", from: "millwarden@tarnholm.example", timeoutS: 5 });
    const ch = new EmailChannel(cfg, {});
    try {
      const r = await ch.send(delivery());
      expect(r).toMatchObject({ ok: false });
      expect(smtp.mails).toHaveLength(0);
      expect((r as { error: string }).error).toMatch(/certificate/i);
    } finally {
      await ch.close();
      await smtp.close();
    }
  });

  it("a refused login is not retried and its error does not hold the password", async () => {
    const smtp = await startSmtp({ tls: true, login: { user: "millwarden", pass: "the-right-one" } });
    const cfg = channel<"email">({ id: "mail", kind: "email", host: "127.0.0.1", port: smtp.port, tls: "starttls", caFile: TEST_CERT_FILE, username: "millwarden", passwordEnv: "MW_SMTP_PASSWORD", from: "millwarden@tarnholm.example" });
    const ch = new EmailChannel(cfg, { MW_SMTP_PASSWORD: SMTP_PASSWORD });
    try {
      const r = await ch.send(delivery());
      expect(r).toMatchObject({ ok: false, retry: false });
      expect((r as { error: string }).error).toMatch(/535/);
      expect((r as { error: string }).error).not.toContain(SMTP_PASSWORD);
    } finally {
      await ch.close();
      await smtp.close();
    }
  });

  it("4xx is retried, 5xx is not, a server that is not there is retried", async () => {
    for (const [code, retry] of [
      [451, true],
      [550, false],
    ] as const) {
      const smtp = await startSmtp({ rcptCode: code });
      const ch = new EmailChannel(channel<"email">({ id: "mail", kind: "email", host: "127.0.0.1", port: smtp.port, tls: "none", from: "millwarden@tarnholm.example" }), {});
      try {
        expect(await ch.send(delivery())).toMatchObject({ ok: false, retry });
      } finally {
        await ch.close();
        await smtp.close();
      }
    }
    const free = await freePort();
    const ch = new EmailChannel(channel<"email">({ id: "mail", kind: "email", host: "127.0.0.1", port: free, tls: "none", from: "millwarden@tarnholm.example", timeoutS: 3 }), {});
    expect(await ch.send(delivery())).toMatchObject({ ok: false, retry: true });
    expect(await ch.send(delivery(null))).toMatchObject({ ok: false, retry: false, error: "no e-mail address for anna" });
    await ch.close();
  });

  it("a password environment variable that is not set is a clear error at start", () => {
    const cfg = channel<"email">({ id: "mail", kind: "email", host: "127.0.0.1", port: 25, username: "u", passwordEnv: "MW_NOT_SET", from: "millwarden@tarnholm.example" });
    expect(() => new EmailChannel(cfg, {})).toThrow('notification channel "mail": environment variable MW_NOT_SET (passwordEnv) is not set');
  });
});

describe("webhook: JSON POST signed with HMAC-SHA256 over timestamp and body", () => {
  let hook: Awaited<ReturnType<typeof startWebhookReceiver>>;
  beforeAll(async () => {
    hook = await startWebhookReceiver(HOOK_KEY);
  });
  afterAll(() => hook.close());
  const cfg = () => channel<"webhook">({ id: "hook", kind: "webhook", url: hook.url, secretEnv: "MW_HOOK_KEY", timeoutS: 3 });

  it("the receiver verifies the signature, and the body carries the message's fields and text", async () => {
    const ch = new WebhookChannel(cfg(), { MW_HOOK_KEY: HOOK_KEY });
    const d = delivery();
    expect(await ch.send(d)).toEqual({ ok: true });
    const got = hook.received.at(-1)!;
    expect(got.verified).toBe(true);
    expect(got.headers["content-type"]).toBe("application/json; charset=utf-8");
    expect(got.headers["x-millwarden-delivery"]).toBe(shortHash(d.dedupKey));
    const body = JSON.parse(got.body) as Record<string, unknown>;
    expect(body).toMatchObject({
      advisoryOnly: d.fields.advisoryOnly,
      kind: "advisory",
      tier: "warning",
      plant: "Coal grinding line 2",
      advisoryId: "dewpoint-bf2",
      unit: { id: "bf2", name: "Bag filter 2" },
      indicator: "Bag filter outlet dew point margin",
      value: 4.2,
      limit: 5,
      trend: { value: -0.31, unit: "K/min" },
      atUtc: "2026-01-06 09:00:00 UTC",
      atLocal: "2026-01-06 10:00:00 CET",
      link: "https://millwarden.tarnholm.example/#advisory=dewpoint-bf2",
      to: { person: "anna", name: "Anna Berg", address: "anna.berg@tarnholm.example" },
      text: d.text,
    });
  });

  it("a tampered body, a changed timestamp and an old timestamp are rejected by the receiver", async () => {
    const ch = new WebhookChannel(cfg(), { MW_HOOK_KEY: HOOK_KEY });
    await ch.send(delivery());
    const good = hook.received.at(-1)!;
    const replay = (body: string, ts: string) =>
      fetch(hook.url, { method: "POST", headers: { "content-type": "application/json", "x-millwarden-timestamp": ts, "x-millwarden-signature": String(good.headers["x-millwarden-signature"]) }, body });
    const ts = String(good.headers["x-millwarden-timestamp"]);
    expect((await replay(good.body, ts)).status).toBe(204);
    expect((await replay(good.body.replace('"value":4.2', '"value":14.2'), ts)).status).toBe(401);
    expect((await replay(good.body, String(Number(ts) + 1))).status).toBe(401);
    // Signed correctly, but ten minutes old: refused as a replay.
    const oldTs = Math.floor(Date.now() / 1000) - 600;
    const old = await fetch(hook.url, { method: "POST", headers: { "x-millwarden-timestamp": String(oldTs), "x-millwarden-signature": webhookSignature(HOOK_KEY, oldTs, good.body) }, body: good.body });
    expect(old.status).toBe(401);
    // A sender with the wrong key is refused, and it is not retried (401 is permanent).
    const wrong = new WebhookChannel(cfg(), { MW_HOOK_KEY: "not-the-key" });
    expect(await wrong.send(delivery())).toEqual({ ok: false, retry: false, error: `webhook ${new URL(hook.url).origin}: HTTP 401` });
  });

  it("408, 429 and 5xx are retried, other 4xx not; an unreachable receiver is retried; errors name the origin only", async () => {
    const ch = new WebhookChannel(cfg(), { MW_HOOK_KEY: HOOK_KEY });
    try {
      for (const [status, retry] of [
        [503, true],
        [429, true],
        [408, true],
        [400, false],
        [404, false],
      ] as const) {
        hook.setStatus(status);
        expect(await ch.send(delivery())).toEqual({ ok: false, retry, error: `webhook ${new URL(hook.url).origin}: HTTP ${status}` });
      }
    } finally {
      hook.setStatus(204);
    }
    const port = await freePort();
    const away = new WebhookChannel(channel<"webhook">({ id: "hook", kind: "webhook", url: `http://127.0.0.1:${port}/path/with-token-abc123`, secretEnv: "K" }), { K: HOOK_KEY });
    const r = await away.send(delivery());
    expect(r).toMatchObject({ ok: false, retry: true });
    expect((r as { error: string }).error).toBe(`webhook http://127.0.0.1:${port}: ECONNREFUSED`);
  });
});

describe("MQTT publish to the site's messaging broker (aedes on loopback)", () => {
  let server: net.Server;
  let broker: Aedes;
  let url: string;
  const MQTT_PASSWORD = "mqtt-pw-72fa";
  beforeAll(async () => {
    broker = await Aedes.createBroker({
      authenticate: (_c, user, pass, done) => done(null, user === "notifier" ? pass?.toString() === MQTT_PASSWORD : true),
    });
    server = net.createServer(broker.handle);
    await new Promise<void>((ok) => server.listen(0, "127.0.0.1", () => ok()));
    url = `mqtt://127.0.0.1:${(server.address() as net.AddressInfo).port}`;
  });
  afterAll(() => new Promise<void>((ok) => broker.close(() => server.close(() => ok()))));

  it("publishes the message as JSON to the configured topic with QoS 1", async () => {
    const sub = await mqtt.connectAsync(url, { protocolVersion: 4 });
    const got = new Promise<{ topic: string; body: string; qos: number }>((ok) => sub.on("message", (topic, payload, packet) => ok({ topic, body: payload.toString("utf8"), qos: packet.qos })));
    await sub.subscribeAsync("tarnholm/cg2/millwarden/notifications", { qos: 1 });
    const ch = new MqttChannel(channel<"mqtt">({ id: "broker", kind: "mqtt", url, topic: "tarnholm/cg2/millwarden/notifications", username: "notifier", passwordEnv: "MW_MQTT_PASSWORD", timeoutS: 3 }), { MW_MQTT_PASSWORD: MQTT_PASSWORD });
    try {
      const d = delivery();
      expect(await ch.send(d)).toEqual({ ok: true });
      const m = await got;
      expect(m.topic).toBe("tarnholm/cg2/millwarden/notifications");
      expect(m.qos).toBe(1);
      expect(JSON.parse(m.body)).toMatchObject({ delivery: shortHash(d.dedupKey), advisoryId: "dewpoint-bf2", tier: "warning", advisoryOnly: d.fields.advisoryOnly, text: d.text });
    } finally {
      await ch.close();
      await sub.endAsync();
    }
  });

  it("a refused login or an absent broker fails within the timeout, to be retried, without the password in the error", async () => {
    const bad = new MqttChannel(channel<"mqtt">({ id: "broker", kind: "mqtt", url, topic: "t/n", username: "notifier", passwordEnv: "P", timeoutS: 2 }), { P: "wrong-password-9" });
    const r = await bad.send(delivery());
    await bad.close();
    expect(r).toMatchObject({ ok: false, retry: true });
    expect((r as { error: string }).error).toMatch(/^MQTT mqtt:\/\/127\.0\.0\.1:\d+ topic t\/n: not connected/);
    expect((r as { error: string }).error).not.toContain("wrong-password-9");
    const port = await freePort();
    const away = new MqttChannel(channel<"mqtt">({ id: "broker", kind: "mqtt", url: `mqtt://127.0.0.1:${port}`, topic: "t/n", timeoutS: 1 }), {});
    expect(await away.send(delivery())).toMatchObject({ ok: false, retry: true });
    await away.close();
  });
});

/** A loopback port nobody listens on (taken and released at once). */
function freePort(): Promise<number> {
  return new Promise((ok) => {
    const s = net.createServer();
    s.listen(0, "127.0.0.1", () => {
      const p = (s.address() as net.AddressInfo).port;
      s.close(() => ok(p));
    });
  });
}
