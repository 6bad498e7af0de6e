// `millwarden run` as systemd drives it: a child process fed over MQTT (embedded broker on
// loopback). SIGHUP with a good config swaps the rule set in; SIGHUP with a broken one keeps the
// running rules and logs the problem with file:line; `millwarden reload --pid-file` does the same;
// SIGTERM stops it with exit code 0 and the samples written to the historian.
import { spawn, spawnSync, type ChildProcess } from "node:child_process";
import { existsSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import mqtt from "mqtt";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { startEmbeddedBroker, type EmbeddedBroker } from "../../src/daemon/embedded-broker.js";
import { tempDir, waitFor } from "../integration/helpers.js";

const ROOT = join(import.meta.dirname, "../..");
const TSX = ["--import", "tsx", join(ROOT, "src/cli/main.ts")];

let broker: EmbeddedBroker;
beforeAll(async () => {
  broker = await startEmbeddedBroker(0, "127.0.0.1");
});
afterAll(async () => {
  await broker.close();
});

const TOPIC = `mw-run-signals/${process.pid}/BF2-TT-201`;

/** A small plant config: one temperature, one high rule whose notice threshold is `noticeC`. */
function plantYaml(dbPath: string, ruleId: string, noticeC: number): string {
  return `site:
  name: Tarnholm Works
  plant: Coal grinding line 2 (test)
  barometricPressureHPa: 1013
storage:
  path: ${dbPath}
server:
  host: 127.0.0.1
  port: 0
sources:
  - id: m
    kind: mqtt
    url: ${broker.url}
signals:
  - { id: bf2.inlet.temp, name: Bag filter inlet temperature, tag: BF2-TT-201, source: m, topic: ${TOPIC}, unit: degC, range: [0, 300], expectedPeriodS: 1 }
units:
  - { id: bf2, name: Bag filter 2, kind: bag-filter }
rules:
  - id: ${ruleId}
    title: Bag filter inlet hot
    unit: bf2
    quantity: bf2.inlet.temp
    direction: high
    tiers: { notice: ${noticeC} }
    cause: test rule
    consequence: test rule
    check: test rule
    origin: test threshold, not a plant value
`;
}

interface Child {
  proc: ChildProcess;
  out: () => string;
  exit: Promise<number | null>;
}

function startRun(config: string, pidFile: string): Child {
  const proc = spawn(process.execPath, [...TSX, "run", "--config", config, "--log", "text", "--pid-file", pidFile], { cwd: ROOT, stdio: ["ignore", "pipe", "pipe"] });
  let text = "";
  proc.stdout!.on("data", (b: Buffer) => (text += b.toString()));
  proc.stderr!.on("data", (b: Buffer) => (text += b.toString()));
  const exit = new Promise<number | null>((ok) => proc.once("exit", (code) => ok(code)));
  return { proc, out: () => text, exit };
}

async function activeIds(url: string): Promise<string[]> {
  const r = await fetch(`${url}/api/advisories`);
  const body = (await r.json()) as { active: { id: string }[] };
  return body.active.map((a) => a.id);
}

describe("millwarden run: signals", { timeout: 90_000 }, () => {
  it("reloads on SIGHUP (good config applied, broken config refused) and stops on SIGTERM with the historian flushed", async () => {
    const dir = tempDir("mw-run-signals-");
    const db = join(dir.path, "millwarden.db");
    const config = join(dir.path, "plant.yaml");
    const pidFile = join(dir.path, "millwarden.pid");
    writeFileSync(config, plantYaml(db, "bf2-inlet-hot", 500));
    const child = startRun(config, pidFile);
    const pub = await mqtt.connectAsync(broker.url, { protocolVersion: 4 });
    // 150 °C every 200 ms: under the first rule's 500, over the reloaded rule's 100.
    const feeder = setInterval(() => void pub.publishAsync(TOPIC, JSON.stringify({ value: 150 })), 200);
    try {
      await waitFor(() => /dashboard at (http:\S+)/.test(child.out()), 40_000, "the dashboard URL in the log");
      const url = /dashboard at (http:\S+)/.exec(child.out())![1]!;
      await waitFor(() => existsSync(pidFile), 10_000, "the pid file");
      await new Promise((r) => setTimeout(r, 1500));
      expect(await activeIds(url)).toEqual([]);

      // A good config: another rule, lower threshold. It is raised on the same data.
      writeFileSync(config, plantYaml(db, "bf2-inlet-warm", 100));
      child.proc.kill("SIGHUP");
      await waitFor(() => child.out().includes("reload: config applied"), 20_000, "the reload log line");
      expect(child.out()).toMatch(/reload: config applied: 1 signals, 1 rules \(bf2-inlet-warm\)/);
      const deadline = Date.now() + 10_000;
      while (!(await activeIds(url)).includes("bf2-inlet-warm") && Date.now() < deadline) await new Promise((r) => setTimeout(r, 200));
      expect(await activeIds(url)).toEqual(["bf2-inlet-warm"]);

      // A broken config (a rule on a quantity that does not exist): refused with file:line, the rule set stays.
      const broken = plantYaml(db, "bf2-inlet-broken", 50).replace("quantity: bf2.inlet.temp", "quantity: bf2.inlet.tmep");
      writeFileSync(config, broken);
      const brokenLine = broken.split("\n").findIndex((l) => l.includes("bf2.inlet.tmep")) + 1;
      // Through the command this time: it checks the file first and refuses to signal.
      const refused = spawnSync(process.execPath, [...TSX, "reload", "--pid-file", pidFile, "--config", config], { cwd: ROOT, encoding: "utf8", timeout: 30_000 });
      expect(refused.status).toBe(1);
      expect(refused.stderr).toContain(`${config}:${brokenLine}:`);
      // Straight to the daemon: it refuses too and says where.
      child.proc.kill("SIGHUP");
      await waitFor(() => child.out().includes("reload refused"), 20_000, "the refusal in the log");
      expect(child.out()).toContain(`${config}:${brokenLine}:`);
      expect(child.out()).toMatch(/unknown quantity "bf2\.inlet\.tmep"/);
      await new Promise((r) => setTimeout(r, 1500));
      expect(await activeIds(url)).toEqual(["bf2-inlet-warm"]);

      // `millwarden reload` with a good config again.
      writeFileSync(config, plantYaml(db, "bf2-inlet-hot", 500));
      const sent = spawnSync(process.execPath, [...TSX, "reload", "--pid-file", pidFile, "--config", config], { cwd: ROOT, encoding: "utf8", timeout: 30_000 });
      expect(sent.stderr).toBe("");
      expect(sent.status).toBe(0);
      await waitFor(() => /rules \(bf2-inlet-hot\)/.test(child.out()), 20_000, "the second reload");

      // The last sample before the stop: seen by the core, then SIGTERM at once; it must be in the file.
      clearInterval(feeder);
      await pub.publishAsync(TOPIC, JSON.stringify({ value: 151.5 }));
      const seen = async () => {
        const st = (await (await fetch(`${url}/api/state`)).json()) as { signals: { id: string; value: number | null }[] };
        return st.signals.find((x) => x.id === "bf2.inlet.temp")?.value === 151.5;
      };
      const until = Date.now() + 10_000;
      while (!(await seen()) && Date.now() < until) await new Promise((r) => setTimeout(r, 20));
      child.proc.kill("SIGTERM");
      expect(await child.exit).toBe(0);
      expect(child.out()).toMatch(/SIGTERM: stopping/);
      expect(child.out()).toMatch(/stopped\n/);
      expect(existsSync(pidFile)).toBe(false);
      const exported = spawnSync(process.execPath, [...TSX, "export", "--config", config, "--from", "0", "--to", String(Date.now() + 60_000)], { cwd: ROOT, encoding: "utf8", timeout: 30_000 });
      expect(exported.status).toBe(0);
      const rows = exported.stdout.split("\n").filter((l) => l.includes(",bf2.inlet.temp,"));
      expect(rows.length).toBeGreaterThan(10);
      expect(rows.at(-1)).toMatch(/,bf2\.inlet\.temp,151\.5/);
    } finally {
      clearInterval(feeder);
      await pub.endAsync();
      if (child.proc.exitCode === null) child.proc.kill("SIGKILL");
      dir.remove();
    }
  });
});
