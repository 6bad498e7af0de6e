// The daemon's audit trail end to end: "config loaded" with the SHA-256 of the file's bytes at
// start, then a login and a command over real HTTP, each in the historian's audit_log and as a
// log line, and the password in neither.
import { createHash } from "node:crypto";
import { readFileSync } from "node:fs";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { DEMO_CONFIG } from "../../src/cli/main.js";
import { Daemon } from "../../src/daemon/daemon.js";
import { startEmbeddedBroker, type EmbeddedBroker } from "../../src/daemon/embedded-broker.js";
import { memoryLogger } from "../../src/daemon/log.js";
import { hashPassword } from "../../src/server/passwords.js";
import { demoConfigFor, tempDir } from "./helpers.js";

let broker: EmbeddedBroker;
beforeAll(async () => {
  broker = await startEmbeddedBroker(0, "127.0.0.1");
});
afterAll(async () => {
  await broker.close();
});

describe("daemon audit log", { timeout: 30_000 }, () => {
  it("records the config's SHA-256 at start, then logins and commands, without the password", async () => {
    const dir = tempDir("mw-audit-");
    const log = memoryLogger();
    const bytes = readFileSync(DEMO_CONFIG);
    // SHA-256 (FIPS 180-4) of the file's bytes, as `sha256sum config/demo.yaml` prints it.
    const sha256 = createHash("sha256").update(bytes).digest("hex");
    const cfg = demoConfigFor(broker.url, `mw-audit/${process.pid}`, dir.path);
    const d = await Daemon.start({ config: cfg, log, configFile: { path: DEMO_CONFIG, sha256 } });
    try {
      const password = "Tarnholm-admin-pass-99";
      d.historian.accounts().addUser("s.admin", "admin", await hashPassword(password, { logN: 10, r: 8, p: 1 }), Date.now());
      const login = await fetch(`${d.url}/api/login`, { method: "POST", headers: { "content-type": "application/json" }, body: JSON.stringify({ user: "s.admin", password }) });
      expect(login.status).toBe(200);
      const cookie = login.headers.get("set-cookie")!.split(";")[0]!;
      const { csrfToken } = (await login.json()) as { csrfToken: string };
      const wrong = await fetch(`${d.url}/api/login`, { method: "POST", headers: { "content-type": "application/json" }, body: JSON.stringify({ user: "s.admin", password: `${password}-wrong` }) });
      expect(wrong.status).toBe(401);
      // An admin acts as engineer in the core: out of service is allowed, even from normal.
      const cmd = await fetch(`${d.url}/api/advisories/o2-margin-vm2/out-of-service`, {
        method: "POST",
        headers: { "content-type": "application/json", cookie, "x-csrf-token": csrfToken },
        body: JSON.stringify({ reason: "analyser exchanged" }),
      });
      expect(cmd.status).toBe(200);
      expect(d.engine.currentAdvisories().find((a) => a.id === "o2-margin-vm2")).toMatchObject({ state: "out-of-service", heldBy: "s.admin" });
      const audit = await fetch(`${d.url}/api/audit?limit=10`, { headers: { cookie } });
      const entries = ((await audit.json()) as { entries: { action: string; actor: string; target: string | null; source: string; detail: Record<string, unknown> }[] }).entries;
      expect(entries.map((e) => e.action)).toEqual(["advisory.out-of-service", "login.failed", "login.ok", "config.loaded"]);
      expect(entries[3]).toMatchObject({ actor: "daemon", source: "daemon", target: DEMO_CONFIG, detail: { sha256, site: cfg.site.name, rules: cfg.rules.length } });
      expect(entries[0]).toMatchObject({ actor: "s.admin", target: "o2-margin-vm2", detail: { role: "admin", reason: "analyser exchanged", outcome: "ok" } });
      expect(log.lines).toContain(`info audit: config.loaded by daemon on ${DEMO_CONFIG} (daemon)`);
      expect(log.lines).toContain("info audit: login.ok by s.admin on s.admin (http)");
      const everything = log.lines.join("\n") + JSON.stringify(entries);
      expect(everything).not.toContain(password);
      expect(everything).not.toContain(csrfToken);
      expect(everything).not.toContain(cookie.split("=")[1]);
    } finally {
      await d.stop();
      dir.remove();
    }
  });
});
