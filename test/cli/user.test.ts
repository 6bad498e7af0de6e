// `millwarden user`: accounts in the historian file named by the config, passwords from stdin
// (a script) and never from the command line; every change in the audit log, source "cli".
import { spawnSync } from "node:child_process";
import { readFileSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { PassThrough, Readable } from "node:stream";
import { afterEach, beforeEach, describe, expect, it } from "vitest";
import { UserCommandError, userCommand } from "../../src/cli/user.js";
import { hashParams, verifyPassword } from "../../src/server/passwords.js";
import { Historian } from "../../src/store/historian.js";
import { tempDir } from "../integration/helpers.js";

const ROOT = join(import.meta.dirname, "../..");

let dir: ReturnType<typeof tempDir>;
let cfg: string;
let db: string;
beforeEach(() => {
  dir = tempDir("mw-user-");
  db = join(dir.path, "h.db");
  cfg = join(dir.path, "plant.yaml");
  writeFileSync(cfg, readFileSync(join(ROOT, "config/demo.yaml"), "utf8").replace("path: data/demo/millwarden.db", `path: ${db}`));
});
afterEach(() => dir.remove());

/** Runs userCommand in this process with `input` as a piped (non-terminal) stdin. */
async function run(args: string[], input = ""): Promise<{ code: number | null; out: string; err: string; thrown: Error | null }> {
  const stdin = Readable.from([Buffer.from(input)]) as unknown as NodeJS.ReadStream;
  const stdout = new PassThrough();
  const stderr = new PassThrough();
  let out = "";
  let err = "";
  stdout.on("data", (c: Buffer) => (out += c.toString()));
  stderr.on("data", (c: Buffer) => (err += c.toString()));
  try {
    const code = await userCommand(args, { stdin, stdout, stderr });
    return { code, out, err, thrown: null };
  } catch (e) {
    return { code: null, out, err, thrown: e as Error };
  }
}

function withHistorian<T>(fn: (h: Historian) => T): T {
  const h = Historian.open({ path: db });
  try {
    return fn(h);
  } finally {
    h.close();
  }
}

describe("millwarden user (a real process)", { timeout: 60_000 }, () => {
  it("adds an account with the password from stdin, then lists it; the password shows nowhere", async () => {
    const cli = (input: string, ...args: string[]) =>
      spawnSync(process.execPath, ["--import", "tsx", join(ROOT, "src/cli/main.ts"), "user", ...args], { cwd: ROOT, encoding: "utf8", input, timeout: 30_000 });
    const add = cli("Tarnholm-night-shift-7\n", "add", "j.ferris", "--role", "operator", "--config", cfg);
    expect(add.stderr).toBe("");
    expect(add.status).toBe(0);
    expect(add.stdout).toBe("added j.ferris (operator)\n");
    const list = cli("", "list", "--config", cfg);
    expect(list.status).toBe(0);
    expect(list.stdout).toMatch(/^name\s+role\s+created\s+changed\nj\.ferris\s+operator\s+\d{4}-\d\d-\d\dT/);
    const user = withHistorian((h) => h.accounts().findUser("j.ferris"))!;
    // Stored at the production cost (N = 2^15, r = 8, p = 3), and it checks.
    expect(hashParams(user.passwordHash)).toEqual({ logN: 15, r: 8, p: 3 });
    expect(await verifyPassword("Tarnholm-night-shift-7", user.passwordHash)).toBe(true);
    for (const text of [add.stdout, add.stderr, list.stdout, list.stderr, JSON.stringify(withHistorian((h) => h.accounts().auditLog(10)))]) {
      expect(text).not.toContain("Tarnholm-night-shift-7");
    }
  });
});

describe("millwarden user (in process)", { timeout: 30_000 }, () => {
  it("changes a password (ending the sessions: the version goes up) and removes the account; each change is recorded", async () => {
    expect((await run(["add", "m.okafor", "--role", "engineer", "--config", cfg], "first-password-for-m\r\n")).code).toBe(0);
    const first = withHistorian((h) => h.accounts().findUser("m.okafor"))!;
    // A CR LF from a Windows-made file is not part of the password.
    expect(await verifyPassword("first-password-for-m", first.passwordHash)).toBe(true);
    const passwd = await run(["passwd", "M.Okafor", "--config", cfg], "second-password-for-m\n");
    expect(passwd.out).toBe("changed the password of m.okafor; its open sessions have ended\n");
    const second = withHistorian((h) => h.accounts().findUser("m.okafor"))!;
    expect(second.version).toBe(first.version + 1);
    expect(await verifyPassword("second-password-for-m", second.passwordHash)).toBe(true);
    expect(await verifyPassword("first-password-for-m", second.passwordHash)).toBe(false);
    expect((await run(["remove", "m.okafor", "--config", cfg])).out).toBe("removed m.okafor (engineer); its open sessions have ended\n");
    expect(withHistorian((h) => h.accounts().findUser("m.okafor"))).toBeNull();
    const audit = withHistorian((h) => h.accounts().auditLog(10));
    expect(audit.map((e) => [e.action, e.target, e.source])).toEqual([
      ["user.remove", "m.okafor", "cli"],
      ["user.passwd", "m.okafor", "cli"],
      ["user.add", "m.okafor", "cli"],
    ]);
    expect(audit[2]!.detail).toEqual({ role: "engineer" });
    expect(JSON.stringify(audit)).not.toMatch(/password-for-m/);
  });

  it.each([
    [["add", "p.lindqvist", "--role", "operator"], "long-enough-password", /--config FILE is required/],
    [["add", "p.lindqvist", "--config", "CFG"], "long-enough-password", /expected --role viewer\|operator\|engineer\|admin, found none/],
    [["add", "p.lindqvist", "--role", "root", "--config", "CFG"], "long-enough-password", /found "root"/],
    [["add", "p lindqvist", "--role", "viewer", "--config", "CFG"], "long-enough-password", /user name: expected 1 to 64 characters/],
    // A password on the command line is refused: it would show in `ps` and the shell history.
    [["add", "p.lindqvist", "hunter2-on-argv", "--role", "viewer", "--config", "CFG"], "", /expected one NAME, found 2 \(the password is never given on the command line\)/],
    [["passwd", "nobody", "--config", "CFG"], "long-enough-password", /user "nobody": no such account/],
    [["remove", "nobody", "--config", "CFG"], "", /no such account/],
    [["rename", "x", "--config", "CFG"], "", /expected add, list, passwd, remove or pin, found "rename"/],
  ])("refuses %j with what it expected", async (args, input, why) => {
    const r = await run(args.map((a) => (a === "CFG" ? cfg : a)), input);
    expect(r.thrown).toBeInstanceOf(UserCommandError);
    expect(r.thrown!.message).toMatch(why);
    expect(r.thrown!.message).not.toContain("hunter2");
  });

  it("refuses a short password without creating the account and without repeating it", async () => {
    const r = await run(["add", "p.lindqvist", "--role", "viewer", "--config", cfg], "short\n");
    expect(r.thrown!.message).toBe("password: expected at least 12 characters, found 5; nothing was changed");
    expect(withHistorian((h) => h.accounts().listUsers())).toEqual([]);
  });

  it("refuses a name taken in another case before asking for a password", async () => {
    await run(["add", "j.ferris", "--role", "operator", "--config", cfg], "Tarnholm-night-shift-7\n");
    const r = await run(["add", "J.Ferris", "--role", "admin", "--config", cfg], "");
    expect(r.thrown!.message).toMatch(/an account named "j.ferris" exists already \(names compare without case\)/);
  });

  it("on a terminal asks twice without echo (raw mode), takes backspace, and refuses two different entries", async () => {
    const terminal = (keys: string[]) => {
      const stdin = new PassThrough() as unknown as NodeJS.ReadStream & { rawModes: boolean[] };
      stdin.isTTY = true;
      stdin.rawModes = [];
      stdin.setRawMode = (mode: boolean) => {
        stdin.rawModes.push(mode);
        return stdin;
      };
      // Each answer is typed once the prompt is there.
      let i = 0;
      const stderr = new PassThrough();
      let shown = "";
      stderr.on("data", (c: Buffer) => {
        shown += c.toString();
        if (c.toString().endsWith(": ") && i < keys.length) setImmediate(() => (stdin as unknown as PassThrough).write(keys[i++]!));
      });
      return { stdin, stderr, shown: () => shown };
    };
    const t = terminal(["typed-on-the-tty-X\u007f1\r", "typed-on-the-tty-1\r"]);
    const stdout = new PassThrough();
    expect(await userCommand(["add", "s.admin", "--role", "admin", "--config", cfg], { stdin: t.stdin, stdout, stderr: t.stderr })).toBe(0);
    expect(t.shown()).toBe("new password for s.admin: \nthe same again: \n");
    expect(t.stdin.rawModes).toEqual([true, false, true, false]);
    expect(await verifyPassword("typed-on-the-tty-1", withHistorian((h) => h.accounts().findUser("s.admin"))!.passwordHash)).toBe(true);
    const u = terminal(["first-entry-typed-A\r", "first-entry-typed-B\r"]);
    await expect(userCommand(["passwd", "s.admin", "--config", cfg], { stdin: u.stdin, stdout, stderr: u.stderr })).rejects.toThrow("the two passwords differ; nothing was changed");
  });

  it("sets a PIN for acknowledge links (digits only, hashed like a password), refuses a bad one, clears it; the PIN shows nowhere", async () => {
    expect((await run(["add", "a.berg", "--role", "operator", "--config", cfg], "a-berg-password-Tarnholm\n")).code).toBe(0);
    const set = await run(["pin", "A.Berg", "--config", cfg], "735190\n");
    expect(set.out).toBe("set the PIN of a.berg (for acknowledge links in notifications)\n");
    const pinHash = withHistorian((h) => h.accounts().findPinHash("a.berg"))!;
    expect(pinHash).toMatch(/^scrypt\$/);
    expect(await verifyPassword("735190", pinHash)).toBe(true);
    // A PIN does not end the sessions: the account's version is unchanged.
    expect(withHistorian((h) => h.accounts().findUser("a.berg"))!.version).toBe(1);
    for (const bad of ["12345", "12345a", "1234567890123"]) {
      const r = await run(["pin", "a.berg", "--config", cfg], `${bad}\n`);
      expect(r.thrown?.message).toMatch(/^PIN: expected 6 to 12 digits, found \d+ characters/);
    }
    expect(await verifyPassword("735190", withHistorian((h) => h.accounts().findPinHash("a.berg"))!)).toBe(true);
    expect((await run(["pin", "j.nobody", "--config", cfg], "735190\n")).thrown?.message).toMatch(/no such account/);
    expect((await run(["pin", "a.berg", "--clear", "--config", cfg])).out).toBe("removed the PIN of a.berg\n");
    expect(withHistorian((h) => h.accounts().findPinHash("a.berg"))).toBeNull();
    const audit = withHistorian((h) => h.accounts().auditLog(10));
    expect(audit.map((e) => e.action).slice(0, 2)).toEqual(["user.pin-clear", "user.pin"]);
    expect(JSON.stringify(audit)).not.toContain("735190");
    // Removing the account removes its PIN too.
    await run(["pin", "a.berg", "--config", cfg], "246801\n");
    await run(["remove", "a.berg", "--config", cfg]);
    expect(withHistorian((h) => h.accounts().findPinHash("a.berg"))).toBeNull();
  });

  it("lists nothing yet with a hint", async () => {
    expect((await run(["list", "--config", cfg])).out).toMatch(/^no accounts yet: add one with `millwarden user add/);
  });
});
