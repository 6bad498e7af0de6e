// MQTT: the message as JSON, published to a configured topic on the site's messaging broker
// (never the plant's control system: the box only reads from the plant). The client connects
// at the first delivery and keeps the connection; a delivery while disconnected fails at once
// (retried by the outbox) instead of waiting in mqtt.js's offline queue, which does not survive
// a restart. QoS 1 or 2 waits for the broker's acknowledgement.
import mqtt, { type MqttClient } from "mqtt";
import type { NotificationChannelConfig } from "../../config/sections/notifications.js";
import { originOf } from "../redact.js";
import { webhookBody } from "./webhook.js";
import { errorText, type Channel, type Delivery, type SendResult } from "./types.js";

type MqttChannelConfig = Extract<NotificationChannelConfig, { kind: "mqtt" }>;

export class MqttChannel implements Channel {
  readonly kind = "mqtt" as const;
  readonly id: string;
  private client: MqttClient | null = null;
  private lastConnectError: string | null = null;
  private readonly password: string | undefined;

  constructor(
    private readonly cfg: MqttChannelConfig,
    env: NodeJS.ProcessEnv,
  ) {
    this.id = cfg.id;
    this.password = cfg.passwordEnv ? env[cfg.passwordEnv] : undefined;
    if (cfg.passwordEnv && !this.password) throw new Error(`notification channel "${cfg.id}": environment variable ${cfg.passwordEnv} (passwordEnv) is not set`);
  }

  private connect(): MqttClient {
    if (this.client) return this.client;
    const c = mqtt.connect(this.cfg.url, {
      clientId: this.cfg.clientId ?? `millwarden-notify-${process.pid}-${Math.random().toString(16).slice(2, 8)}`,
      protocolVersion: this.cfg.protocolVersion,
      ...(this.cfg.username ? { username: this.cfg.username, password: this.password } : {}),
      reconnectPeriod: 5000,
      connectTimeout: this.cfg.timeoutS * 1000,
      queueQoSZero: false,
      clean: true,
    });
    // Without a listener an 'error' event would throw; the next delivery reports it.
    c.on("error", (err) => {
      this.lastConnectError = errorText(err);
    });
    c.on("connect", () => {
      this.lastConnectError = null;
    });
    this.client = c;
    return c;
  }

  /** Connected within the timeout; a refused or closed attempt answers at once (the client keeps reconnecting). */
  private whenConnected(c: MqttClient): Promise<boolean> {
    if (c.connected) return Promise.resolve(true);
    return new Promise((ok) => {
      const done = (v: boolean) => {
        clearTimeout(t);
        c.off("connect", onConnect);
        c.off("close", onFail);
        c.off("error", onFail);
        ok(v);
      };
      const onConnect = () => done(true);
      const onFail = () => done(false);
      const t = setTimeout(() => done(false), this.cfg.timeoutS * 1000);
      c.on("connect", onConnect);
      c.on("close", onFail);
      c.on("error", onFail);
    });
  }

  async send(d: Delivery): Promise<SendResult> {
    const where = `MQTT ${originOf(this.cfg.url)} topic ${this.cfg.topic}`;
    const c = this.connect();
    if (!(await this.whenConnected(c))) return { ok: false, retry: true, error: `${where}: not connected${this.lastConnectError ? ` (${this.lastConnectError})` : ""}` };
    let timer: NodeJS.Timeout | undefined;
    try {
      await Promise.race([
        c.publishAsync(this.cfg.topic, webhookBody(d), { qos: this.cfg.qos, retain: false }),
        new Promise((_, fail) => {
          timer = setTimeout(() => fail(new Error(`no acknowledgement within ${this.cfg.timeoutS} s`)), this.cfg.timeoutS * 1000);
        }),
      ]);
      return { ok: true };
    } catch (err) {
      return { ok: false, retry: true, error: `${where}: ${errorText(err)}` };
    } finally {
      clearTimeout(timer);
    }
  }

  async close(): Promise<void> {
    const c = this.client;
    this.client = null;
    if (c) await c.endAsync(true).catch(() => undefined);
  }
}
