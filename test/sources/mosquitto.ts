// Test set-up for the MQTT source against a real broker: our own Mosquitto processes on free
// loopback ports (never 1883, where the machine's Mosquitto runs), with a config, certificates
// (openssl) and a password file (mosquitto_passwd) generated per test file, and a TCP proxy that
// can cut the source off while the broker stays up.
import { spawn, spawnSync, type ChildProcess } from "node:child_process";
import { writeFileSync } from "node:fs";
import net from "node:net";
import { userInfo } from "node:os";
import { join } from "node:path";
import { listening } from "../integration/helpers.js";

const onPath = (cmd: string) => spawnSync("sh", ["-c", `command -v ${cmd}`]).status === 0;

/** The tools these tests need that are not on PATH (empty in CI, where they must all exist). */
export const MISSING = ["mosquitto", "mosquitto_passwd", "openssl"].filter((c) => !onPath(c));

export async function freePort(): Promise<number> {
  return new Promise((ok, fail) => {
    const s = net.createServer();
    s.once("error", fail);
    s.listen(0, "127.0.0.1", () => {
      const { port } = s.address() as net.AddressInfo;
      s.close(() => ok(port));
    });
  });
}

function run(cmd: string, args: string[], cwd: string) {
  const r = spawnSync(cmd, args, { cwd, encoding: "utf8" });
  if (r.status !== 0) throw new Error(`${cmd} ${args.join(" ")} failed (${r.status}): ${r.stderr || r.stdout}`);
}

export interface Pki {
  ca: string;
  otherCa: string;
  serverCert: string;
  serverKey: string;
  clientCert: string;
  clientKey: string;
}

/** A test CA, a server certificate for 127.0.0.1 and a client certificate signed by it, and an unrelated CA. */
export function makePki(dir: string): Pki {
  const ec = ["-newkey", "ec", "-pkeyopt", "ec_paramgen_curve:prime256v1", "-nodes"];
  const ca = (name: string, cn: string) =>
    run("openssl", ["req", "-x509", ...ec, "-keyout", `${name}.key`, "-out", `${name}.crt`, "-days", "2", "-subj", `/CN=${cn}`, "-addext", "basicConstraints=critical,CA:TRUE", "-addext", "keyUsage=critical,keyCertSign,cRLSign"], dir);
  ca("ca", "Tarnholm Works test CA");
  ca("other-ca", "Some other CA");
  const leaf = (name: string, cn: string, ext: string) => {
    writeFileSync(join(dir, `${name}.ext`), ext);
    run("openssl", ["req", ...ec, "-keyout", `${name}.key`, "-out", `${name}.csr`, "-subj", `/CN=${cn}`], dir);
    run("openssl", ["x509", "-req", "-in", `${name}.csr`, "-CA", "ca.crt", "-CAkey", "ca.key", "-CAcreateserial", "-out", `${name}.crt`, "-days", "2", "-extfile", `${name}.ext`], dir);
  };
  leaf("server", "127.0.0.1", "subjectAltName=IP:127.0.0.1,DNS:localhost\nbasicConstraints=CA:FALSE\nkeyUsage=critical,digitalSignature\nextendedKeyUsage=serverAuth\n");
  leaf("client", "millwarden-cg2", "basicConstraints=CA:FALSE\nkeyUsage=critical,digitalSignature\nextendedKeyUsage=clientAuth\n");
  const p = (f: string) => join(dir, f);
  return { ca: p("ca.crt"), otherCa: p("other-ca.crt"), serverCert: p("server.crt"), serverKey: p("server.key"), clientCert: p("client.crt"), clientKey: p("client.key") };
}

/** An ACL giving `user` read access to `readTopics` and nothing else. */
export function makeReadOnlyAcl(dir: string, user: string, readTopics: string[]): string {
  const file = join(dir, "acl");
  writeFileSync(file, `user ${user}\n${readTopics.map((t) => `topic read ${t}`).join("\n")}\n`);
  return file;
}

export function makePasswordFile(dir: string, user: string, password: string): string {
  const file = join(dir, "passwd");
  run("mosquitto_passwd", ["-c", "-b", file, user, password], dir);
  return file;
}

export type Listener =
  | { kind: "plain"; port: number }
  | { kind: "tls"; port: number; pki: Pki; requireClientCert?: boolean }
  | { kind: "password"; port: number; passwordFile: string; aclFile?: string };

/** One Mosquitto process with persistence in `dir`; stop() and start() again keep its sessions. */
export class OwnMosquitto {
  private proc: ChildProcess | null = null;
  private output = "";
  private readonly conf: string;

  constructor(
    private readonly dir: string,
    private readonly listeners: Listener[],
  ) {
    this.conf = join(dir, "mosquitto.conf");
    const lines = [
      `user ${userInfo().username}`,
      "per_listener_settings true",
      "persistence true",
      `persistence_location ${dir}/`,
      "persistence_file mosquitto.db",
      "max_queued_messages 1000",
      "log_dest stdout",
      "log_type error",
      "log_type warning",
    ];
    for (const l of listeners) {
      lines.push("", `listener ${l.port} 127.0.0.1`);
      if (l.kind === "plain") lines.push("allow_anonymous true");
      if (l.kind === "password") lines.push("allow_anonymous false", `password_file ${l.passwordFile}`, ...(l.aclFile ? [`acl_file ${l.aclFile}`] : []));
      if (l.kind === "tls") {
        lines.push(`cafile ${l.pki.ca}`, `certfile ${l.pki.serverCert}`, `keyfile ${l.pki.serverKey}`, "allow_anonymous true");
        if (l.requireClientCert) lines.push("require_certificate true");
      }
    }
    writeFileSync(this.conf, `${lines.join("\n")}\n`);
  }

  port(kind: Listener["kind"], requireClientCert = false): number {
    const l = this.listeners.find((x) => x.kind === kind && (x.kind !== "tls" || (x.requireClientCert ?? false) === requireClientCert));
    if (!l) throw new Error(`no ${kind} listener`);
    return l.port;
  }

  async start(): Promise<void> {
    this.output = "";
    const p = spawn("mosquitto", ["-c", this.conf], { stdio: ["ignore", "pipe", "pipe"] });
    this.proc = p;
    p.stdout!.on("data", (b: Buffer) => (this.output += b.toString()));
    p.stderr!.on("data", (b: Buffer) => (this.output += b.toString()));
    const end = Date.now() + 10_000;
    for (const l of this.listeners) {
      while (!(await listening(l.port))) {
        if (p.exitCode !== null || Date.now() > end) throw new Error(`mosquitto -c ${this.conf} did not listen on ${l.port}: ${this.output}`);
        await new Promise((r) => setTimeout(r, 50));
      }
    }
  }

  /** SIGTERM: Mosquitto writes its persistence file (sessions, subscriptions, queued messages) and exits. */
  async stop(): Promise<void> {
    const p = this.proc;
    this.proc = null;
    if (!p || p.exitCode !== null) return;
    await new Promise<void>((ok) => {
      p.once("exit", () => ok());
      p.kill("SIGTERM");
    });
  }
}

/** A TCP proxy in front of the broker: cut() drops the connections and refuses new ones until open(). */
export class CutProxy {
  private up = true;
  private readonly sockets = new Set<net.Socket>();
  private constructor(
    private readonly server: net.Server,
    readonly port: number,
  ) {}

  static async start(targetPort: number): Promise<CutProxy> {
    let proxy: CutProxy | null = null;
    const server = net.createServer((client) => {
      if (!proxy || !proxy.up) {
        client.destroy();
        return;
      }
      const upstream = net.connect(targetPort, "127.0.0.1");
      for (const s of [client, upstream]) {
        proxy.sockets.add(s);
        s.on("close", () => proxy?.sockets.delete(s));
        s.on("error", () => {
          client.destroy();
          upstream.destroy();
        });
      }
      client.pipe(upstream).pipe(client);
    });
    await new Promise<void>((ok) => server.listen(0, "127.0.0.1", ok));
    proxy = new CutProxy(server, (server.address() as net.AddressInfo).port);
    return proxy;
  }

  cut(): void {
    this.up = false;
    for (const s of this.sockets) s.destroy();
  }

  open(): void {
    this.up = true;
  }

  async close(): Promise<void> {
    this.cut();
    await new Promise<void>((ok) => this.server.close(() => ok()));
  }
}
