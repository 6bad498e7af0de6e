// The republisher's connection options against a real Mosquitto: TLS with the site's CA, and a
// user name with the password from the environment (passwordEnv) under an ACL that lets the box
// write only its own tree. The liveness topic comes out retained and "online".
import mqtt from "mqtt";
import { readFileSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { republishSchema } from "../../src/config/sections/republish.js";
import { Republisher } from "../../src/republish/republisher.js";
import { tempDir, waitFor } from "../integration/helpers.js";
import { freePort, makePasswordFile, makePki, MISSING, OwnMosquitto, type Pki } from "../sources/mosquitto.js";

const INFO = { site: "Tarnholm Works", plant: "Coal grinding line 2", units: [{ id: "vm2", name: "Mill", kind: "mill" }] };
let dir: ReturnType<typeof tempDir>;
let pki: Pki;
let mosq: OwnMosquitto;

describe.skipIf(MISSING.length > 0)("republisher: TLS and password", () => {
  beforeAll(async () => {
    dir = tempDir("mw-rp-auth-");
    pki = makePki(dir.path);
    const passwordFile = makePasswordFile(dir.path, "cg2-edge1", "s3cret-uplink");
    const aclFile = join(dir.path, "acl-rw");
    // mosquitto.conf(5): "topic write" lets the user publish there and nowhere else; "read" for the checker.
    writeFileSync(aclFile, "user cg2-edge1\ntopic write mwauth/cg2-edge1/#\ntopic read mwauth/#\n");
    mosq = new OwnMosquitto(dir.path, [
      { kind: "tls", port: await freePort(), pki },
      { kind: "password", port: await freePort(), passwordFile, aclFile },
    ]);
    await mosq.start();
  });
  afterAll(async () => {
    await mosq?.stop();
    dir?.remove();
  });

  const statusOf = async (url: string, opts: mqtt.IClientOptions): Promise<Record<string, unknown>> => {
    const c = mqtt.connect(url, { ...opts, clientId: `chk-${Math.random().toString(16).slice(2)}` });
    try {
      return await new Promise((ok, fail) => {
        const t = setTimeout(() => fail(new Error("no retained status")), 5000);
        c.on("message", (_t, p, packet) => {
          clearTimeout(t);
          ok({ ...(JSON.parse(p.toString()) as Record<string, unknown>), retained: packet.retain });
        });
        c.once("connect", () => c.subscribe("mwauth/cg2-edge1/status", { qos: 1 }));
      });
    } finally {
      await c.endAsync(true);
    }
  };

  const run = async (cfg: Record<string, unknown>, check: () => Promise<Record<string, unknown>>) => {
    const log: string[] = [];
    const r = new Republisher({ config: republishSchema.parse({ box: "cg2-edge1", prefix: "mwauth", ...cfg }), info: INFO, historianPath: ":memory:", log: (l, m) => log.push(`${l} ${m}`), now: Date.now, advisories: () => [] });
    r.start();
    try {
      await waitFor(() => r.stats().connected, 10_000, `connected (${log.join("; ")})`);
      expect(await check()).toMatchObject({ state: "online", box: "cg2-edge1", site: "Tarnholm Works", retained: true });
    } finally {
      await r.stop();
    }
  };

  it("connects over TLS checking the broker against tls.ca", async () => {
    const url = `mqtts://127.0.0.1:${mosq.port("tls")}`;
    await run({ url, tls: { ca: pki.ca } }, () => statusOf(url, { ca: readFileSync(pki.ca) }));
  });

  it("logs in with the password from passwordEnv and publishes within its ACL", async () => {
    const url = `mqtt://127.0.0.1:${mosq.port("password")}`;
    process.env.MW_TEST_UPLINK_PW = "s3cret-uplink";
    try {
      await run({ url, username: "cg2-edge1", passwordEnv: "MW_TEST_UPLINK_PW" }, () => statusOf(url, { username: "cg2-edge1", password: "s3cret-uplink" }));
    } finally {
      delete process.env.MW_TEST_UPLINK_PW;
    }
  });

  it("without the password the broker refuses it, and it stays disconnected", async () => {
    const url = `mqtt://127.0.0.1:${mosq.port("password")}`;
    const r = new Republisher({ config: republishSchema.parse({ url, box: "cg2-edge1", prefix: "mwauth", username: "cg2-edge1", passwordEnv: "MW_TEST_UNSET_PW" }), info: INFO, historianPath: ":memory:", log: () => {}, now: Date.now, advisories: () => [] });
    r.start();
    try {
      await waitFor(() => r.stats().lastError !== null, 10_000, "a refusal");
      expect(r.stats()).toMatchObject({ connected: false });
      expect(r.stats().lastError).toMatch(/Not authorized|Bad username or password/i);
    } finally {
      await r.stop();
    }
  });
});
