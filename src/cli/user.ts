// millwarden user add|list|passwd|remove: local accounts in the historian's file.
//
// Whoever may write the historian file manages the accounts (the admin role matters on the
// HTTP side only). Passwords are read from the terminal without echo, or from stdin when it is
// not a terminal (scripts: the first line), never from the command line (it shows in `ps` and
// in shell history). Every change is written to the audit log, as done by the operating-system
// user, source "cli". A running daemon sees the change at the next request: a removed account
// or a changed password ends its sessions.
import { userInfo } from "node:os";
import { resolve } from "node:path";
import { parseArgs } from "node:util";
import { loadConfig } from "../config/load.js";
import { hashPassword, passwordProblem } from "../server/passwords.js";
import { ACCOUNT_ROLES, AccountError, checkUserName, type AccountRole, type AuditInput } from "../store/accounts.js";
import { Historian } from "../store/historian.js";

export class UserCommandError extends Error {}

/** A PIN: short enough to type on a phone at night; the per-link and per-user lockout limits guessing. */
export const PIN_PATTERN = /^[0-9]{6,12}$/;
export const PIN_RULE = "6 to 12 digits";

const USAGE = `millwarden user add NAME --role viewer|operator|engineer|admin --config FILE
millwarden user list --config FILE
millwarden user passwd NAME --config FILE
millwarden user remove NAME --config FILE
millwarden user pin NAME [--clear] --config FILE
  The password (or PIN) is asked for on the terminal (not shown), or read from the first line of stdin.
  A PIN (${PIN_RULE}) is accepted only with an acknowledge link from a notification.`;

interface Io {
  stdin: NodeJS.ReadStream;
  stdout: NodeJS.WritableStream;
  stderr: NodeJS.WritableStream;
}

/** Who runs the CLI, for the audit log. */
function osUser(): string {
  try {
    return userInfo().username || "unknown";
  } catch {
    return "unknown";
  }
}

/** Reads what is typed on a terminal without echoing it; Ctrl-C cancels. */
function promptHidden(io: Io, question: string): Promise<string> {
  const stdin = io.stdin;
  io.stderr.write(question);
  return new Promise((ok, fail) => {
    let typed = "";
    const finish = (err: Error | null) => {
      stdin.off("data", onData);
      stdin.setRawMode(false);
      stdin.pause();
      io.stderr.write("\n");
      if (err) fail(err);
      else ok(typed);
    };
    const onData = (chunk: Buffer | string) => {
      for (const ch of chunk.toString("utf8")) {
        if (ch === "\r" || ch === "\n") return finish(null);
        if (ch === "\u0003" || ch === "\u0004") return finish(new UserCommandError("cancelled: no password entered"));
        if (ch === "\u007f" || ch === "\b") typed = [...typed].slice(0, -1).join("");
        else if (ch >= " ") typed += ch;
      }
    };
    stdin.setRawMode(true);
    stdin.resume();
    stdin.on("data", onData);
  });
}

/** All of stdin, for scripts: the first line is the password (a trailing CR LF or LF is not part of it). */
async function readStdinLine(stdin: NodeJS.ReadStream): Promise<string> {
  const chunks: Buffer[] = [];
  for await (const chunk of stdin) chunks.push(typeof chunk === "string" ? Buffer.from(chunk) : (chunk as Buffer));
  const text = Buffer.concat(chunks).toString("utf8");
  const line = text.split(/\r?\n/, 1)[0] ?? "";
  return line;
}

/** A new password: twice on a terminal, once from stdin; checked for length, never shown. */
async function readNewPassword(io: Io, name: string): Promise<string> {
  let password: string;
  if (io.stdin.isTTY) {
    password = await promptHidden(io, `new password for ${name}: `);
    const again = await promptHidden(io, "the same again: ");
    if (again !== password) throw new UserCommandError("the two passwords differ; nothing was changed");
  } else {
    password = await readStdinLine(io.stdin);
  }
  const problem = passwordProblem(password);
  if (problem !== null) throw new UserCommandError(`${problem}; nothing was changed`);
  return password;
}

/** A new PIN: twice on a terminal, once from stdin. */
async function readNewPin(io: Io, name: string): Promise<string> {
  let pin: string;
  if (io.stdin.isTTY) {
    pin = await promptHidden(io, `new PIN for ${name} (${PIN_RULE}): `);
    const again = await promptHidden(io, "the same again: ");
    if (again !== pin) throw new UserCommandError("the two PINs differ; nothing was changed");
  } else {
    pin = await readStdinLine(io.stdin);
  }
  if (!PIN_PATTERN.test(pin)) throw new UserCommandError(`PIN: expected ${PIN_RULE}, found ${pin.length} characters${/^[0-9]*$/.test(pin) ? "" : " that are not all digits"}; nothing was changed`);
  return pin;
}

function openHistorian(configPath: string | undefined): Historian {
  if (!configPath) throw new UserCommandError("--config FILE is required (the accounts live in its storage.path)");
  const cfg = loadConfig(configPath);
  return Historian.open({ path: resolve(cfg.storage.path), synchronous: cfg.storage.synchronous });
}

function audit(h: Historian, io: Io, e: Omit<AuditInput, "atMs" | "actor" | "source">): void {
  const err = h.accounts().appendAudit({ ...e, atMs: Date.now(), actor: osUser(), source: "cli" });
  if (err !== null) io.stderr.write(`warning: ${err}\n`);
}

export async function userCommand(args: string[], io: Io = process): Promise<number> {
  const { values, positionals } = parseArgs({ args, allowPositionals: true, options: { config: { type: "string" }, role: { type: "string" }, clear: { type: "boolean" } } });
  const [verb, name, ...extra] = positionals;
  if (extra.length > 0) throw new UserCommandError(`user ${verb ?? ""}: expected one NAME, found ${positionals.length - 1} (the password is never given on the command line)\n\n${USAGE}`);
  const needName = (): string => {
    if (name === undefined) throw new UserCommandError(`user ${verb}: expected the account NAME\n\n${USAGE}`);
    try {
      checkUserName(name);
    } catch (err) {
      throw new UserCommandError((err as Error).message);
    }
    return name;
  };
  try {
    switch (verb) {
      case "add": {
        const n = needName();
        const role = values.role as AccountRole | undefined;
        if (role === undefined || !ACCOUNT_ROLES.includes(role)) {
          throw new UserCommandError(`user add: expected --role ${ACCOUNT_ROLES.join("|")}, found ${role === undefined ? "none" : `"${role}"`}`);
        }
        const h = openHistorian(values.config);
        try {
          // Refuse a taken name before asking for a password.
          const existing = h.accounts().findUser(n);
          if (existing !== null) throw new AccountError(`user "${n}": an account named "${existing.name}" exists already (names compare without case); use "user passwd" or "user remove"`);
          const hash = await hashPassword(await readNewPassword(io, n));
          const user = h.accounts().addUser(n, role, hash, Date.now());
          audit(h, io, { action: "user.add", target: user.name, detail: { role } });
          io.stdout.write(`added ${user.name} (${user.role})\n`);
        } finally {
          h.close();
        }
        return 0;
      }
      case "list": {
        if (name !== undefined) throw new UserCommandError(`user list: expected no NAME, found "${name}"`);
        const h = openHistorian(values.config);
        try {
          const users = h.accounts().listUsers();
          if (users.length === 0) {
            io.stdout.write("no accounts yet: add one with `millwarden user add NAME --role ROLE --config FILE`\n");
            return 0;
          }
          const width = Math.max(4, ...users.map((u) => u.name.length));
          io.stdout.write(`${"name".padEnd(width)}  ${"role".padEnd(8)}  created                   changed\n`);
          for (const u of users) {
            io.stdout.write(`${u.name.padEnd(width)}  ${u.role.padEnd(8)}  ${new Date(u.createdAtMs).toISOString()}  ${new Date(u.updatedAtMs).toISOString()}\n`);
          }
        } finally {
          h.close();
        }
        return 0;
      }
      case "passwd": {
        const n = needName();
        const h = openHistorian(values.config);
        try {
          const existing = h.accounts().findUser(n);
          if (existing === null) throw new AccountError(`user "${n}": no such account (see "millwarden user list")`);
          const hash = await hashPassword(await readNewPassword(io, existing.name));
          const user = h.accounts().setPasswordHash(existing.name, hash, Date.now());
          audit(h, io, { action: "user.passwd", target: user.name, detail: { role: user.role } });
          io.stdout.write(`changed the password of ${user.name}; its open sessions have ended\n`);
        } finally {
          h.close();
        }
        return 0;
      }
      case "remove": {
        const n = needName();
        const h = openHistorian(values.config);
        try {
          const user = h.accounts().removeUser(n);
          audit(h, io, { action: "user.remove", target: user.name, detail: { role: user.role } });
          io.stdout.write(`removed ${user.name} (${user.role}); its open sessions have ended\n`);
        } finally {
          h.close();
        }
        return 0;
      }
      case "pin": {
        const n = needName();
        const h = openHistorian(values.config);
        try {
          const existing = h.accounts().findUser(n);
          if (existing === null) throw new AccountError(`user "${n}": no such account (see "millwarden user list")`);
          if (values.clear) {
            const had = h.accounts().clearPin(existing.name);
            audit(h, io, { action: "user.pin-clear", target: existing.name, detail: { had } });
            io.stdout.write(had ? `removed the PIN of ${existing.name}\n` : `${existing.name} had no PIN\n`);
            return 0;
          }
          const hash = await hashPassword(await readNewPin(io, existing.name));
          h.accounts().setPinHash(existing.name, hash, Date.now());
          audit(h, io, { action: "user.pin", target: existing.name, detail: { role: existing.role } });
          io.stdout.write(`set the PIN of ${existing.name} (for acknowledge links in notifications)\n`);
        } finally {
          h.close();
        }
        return 0;
      }
      default:
        throw new UserCommandError(`user: expected add, list, passwd, remove or pin, found ${verb === undefined ? "nothing" : `"${verb}"`}\n\n${USAGE}`);
    }
  } catch (err) {
    if (err instanceof AccountError) throw new UserCommandError(err.message);
    throw err;
  }
}
