// The service unit and the install script in deploy/: systemd's own checker on the unit, the
// hardening it must keep, and the install script's dry run (plus shellcheck where installed).
import { spawnSync } from "node:child_process";
import { readFileSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { tempDir } from "../integration/helpers.js";

const ROOT = join(import.meta.dirname, "../..");
const UNIT = readFileSync(join(ROOT, "deploy/millwarden.service"), "utf8");
const INSTALL = join(ROOT, "deploy/install.sh");

const has = (cmd: string) => spawnSync("sh", ["-c", `command -v ${cmd}`], { encoding: "utf8" }).status === 0;
/** Missing tools skip the test here with a message; in CI (CI set) the test fails instead. */
function need(cmd: string, pkg: string): boolean {
  if (has(cmd)) return true;
  if (process.env.CI) throw new Error(`${cmd} is missing in CI: .ci/run installs Debian's ${pkg} package`);
  console.warn(`skipped: ${cmd} is not installed (apt-get install -y ${pkg})`);
  return false;
}

/** Every value a key has in the unit (a key may repeat). */
const values = (key: string) => UNIT.split("\n").filter((l) => l.startsWith(`${key}=`)).map((l) => l.slice(key.length + 1));

/**
 * systemd-analyze verify checks that ExecStart's program exists. The unit names /usr/bin/node (where
 * Debian's nodejs puts it) and the installed path; here the copy runs the node that runs this test,
 * through /usr/bin/env, so the check is about the unit and not about where this box keeps node.
 */
function verify(unitText: string): { status: number | null; complaints: string[] } {
  const dir = tempDir("mw-unit-");
  try {
    const file = join(dir.path, "millwarden.service");
    writeFileSync(file, unitText.replace(/^ExecStart=\/usr\/bin\/node /m, `ExecStart=/usr/bin/env ${process.execPath} `));
    const r = spawnSync("systemd-analyze", ["verify", file], { encoding: "utf8", timeout: 30_000 });
    // It also prints complaints about other units on the box; ours name our file.
    const complaints = `${r.stdout}\n${r.stderr}`.split("\n").filter((l) => l.includes("millwarden.service"));
    return { status: r.status, complaints };
  } finally {
    dir.remove();
  }
}

describe("deploy/millwarden.service", () => {
  it("passes systemd-analyze verify", { timeout: 40_000 }, () => {
    if (!need("systemd-analyze", "systemd")) return;
    expect(verify(UNIT)).toEqual({ status: 0, complaints: [] });
  });

  it("the check above catches a mistyped key and a bad value (it warns but exits 0 for those)", { timeout: 40_000 }, () => {
    if (!need("systemd-analyze", "systemd")) return;
    const broken = verify(UNIT.replace("ProtectSystem=strict", "ProtectSystem=strcit").replace("UMask=0077", "UMaks=0077"));
    expect(broken.complaints.join("\n")).toMatch(/protect system value.*strcit/i);
    expect(broken.complaints.join("\n")).toMatch(/Unknown key.*UMaks/);
  });

  it("keeps the hardening", () => {
    expect(values("User")).toEqual(["millwarden"]);
    expect(values("Group")).toEqual(["millwarden"]);
    expect(values("NoNewPrivileges")).toEqual(["yes"]);
    expect(values("CapabilityBoundingSet")).toEqual([""]);
    expect(values("AmbientCapabilities")).toEqual([""]);
    expect(values("ProtectSystem")).toEqual(["strict"]);
    expect(values("ReadWritePaths")).toEqual(["/var/lib/millwarden"]);
    for (const k of ["PrivateTmp", "ProtectHome", "ProtectKernelTunables", "ProtectKernelModules", "ProtectKernelLogs", "ProtectControlGroups", "RestrictNamespaces", "LockPersonality"]) {
      expect(values(k), k).toEqual(["yes"]);
    }
    // AF_NETLINK for os.networkInterfaces() (see the comment in the unit).
    expect(values("RestrictAddressFamilies")).toEqual(["AF_INET AF_INET6 AF_UNIX AF_NETLINK"]);
    expect(values("SystemCallFilter")).toEqual(["@system-service"]);
    expect(values("UMask")).toEqual(["0077"]);
    // V8's JIT needs pages that were writable to become executable (see the comment in the unit).
    expect(values("MemoryDenyWriteExecute")).toEqual(["no"]);
    expect(values("EnvironmentFile")).toEqual(["/etc/millwarden/env"]);
    expect(values("ExecReload")).toEqual(["/bin/kill -HUP $MAINPID"]);
    expect(values("Restart")).toEqual(["on-failure"]);
    expect(Number(values("TimeoutStopSec")[0])).toBeGreaterThan(0);
    expect(values("ExecStart")[0]).toBe("/usr/bin/node /opt/millwarden/bin/millwarden.js run --config /etc/millwarden/millwarden.yaml --log json");
  });
});

describe("deploy/install.sh", () => {
  it("--dry-run prints every step and changes nothing", { timeout: 30_000 }, () => {
    const r = spawnSync("sh", [INSTALL, "--dry-run"], { encoding: "utf8", timeout: 20_000 });
    expect(r.stderr).toBe("");
    expect(r.status).toBe(0);
    const steps = r.stdout.split("\n").filter((l) => l.startsWith("+ "));
    const step = (re: RegExp) => expect(steps.some((l) => re.test(l)), `a step matching ${re}`).toBe(true);
    // The user and group, unless they exist on this box already (then it says so).
    if (!/user millwarden exists/.test(r.stdout)) step(/^\+ useradd --system --gid millwarden .*--shell \/usr\/sbin\/nologin .*millwarden$/);
    step(/npm ci --omit=dev/);
    step(/^\+ install -d -m 0750 -o millwarden -g millwarden \/var\/lib\/millwarden$/);
    step(/^\+ install -d -m 0750 -o root -g millwarden \/etc\/millwarden$/);
    step(/^\+ chmod 0600 \/etc\/millwarden\/env$/);
    step(/^\+ install -m 0644 -o root -g root .*deploy\/millwarden\.service \/etc\/systemd\/system\/millwarden\.service$/);
    step(/^\+ systemctl enable millwarden\.service$/);
    expect(r.stdout).toMatch(/dry run: nothing was changed/);
    // The site's config is never overwritten: installed only when absent.
    if (!/millwarden\.yaml exists: kept/.test(r.stdout)) step(/plant-template\.yaml \/etc\/millwarden\/millwarden\.yaml$/);
  });

  it("refuses an unknown argument", () => {
    const r = spawnSync("sh", [INSTALL, "--dryrun"], { encoding: "utf8", timeout: 20_000 });
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/unknown argument "--dryrun"/);
  });

  it("is clean POSIX sh for shellcheck (optional: Debian's shellcheck)", { timeout: 30_000 }, () => {
    if (!has("shellcheck")) {
      console.warn("skipped: shellcheck is not installed (apt-get install -y shellcheck)");
      return;
    }
    const r = spawnSync("shellcheck", ["-s", "sh", INSTALL], { encoding: "utf8", timeout: 20_000 });
    expect(r.stdout + r.stderr).toBe("");
    expect(r.status).toBe(0);
  });
});
