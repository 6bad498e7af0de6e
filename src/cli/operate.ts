// Operating a running daemon: `millwarden reload` (SIGHUP to the pid in the pid file, after
// checking the config) and `millwarden backup` (a consistent copy of the historian file).
import { existsSync, readFileSync, renameSync, rmSync } from "node:fs";
import { resolve } from "node:path";
import { parseArgs } from "node:util";
import Database from "better-sqlite3";
import { loadConfig } from "../config/load.js";

/** The pid a `millwarden run --pid-file FILE` wrote, checked to be a live process. */
export function readPidFile(file: string): number {
  let text: string;
  try {
    text = readFileSync(file, "utf8");
  } catch (e) {
    throw new Error(`cannot read the pid file "${file}": ${(e as Error).message} (start the daemon with --pid-file ${file})`);
  }
  const pid = Number(text.trim());
  if (!Number.isInteger(pid) || pid <= 1) throw new Error(`the pid file "${file}" should hold one process id; found "${text.trim().slice(0, 40)}"`);
  try {
    process.kill(pid, 0);
  } catch {
    throw new Error(`no process ${pid} (from "${file}"): the daemon is not running, or the file is stale`);
  }
  return pid;
}

/**
 * Check the config first when it is given (the same parse and cross-check the daemon does), so a
 * broken file is reported here and the daemon is not disturbed; then send SIGHUP. The daemon also
 * builds a new core from the file before swapping it in and logs the outcome.
 */
export async function reloadCommand(args: string[]): Promise<number> {
  const { values } = parseArgs({ args, options: { "pid-file": { type: "string" }, config: { type: "string" } } });
  if (!values["pid-file"]) throw new Error("reload needs --pid-file FILE (the file given to `millwarden run --pid-file`); under systemd use `systemctl reload millwarden`");
  if (values.config) loadConfig(values.config);
  const pid = readPidFile(values["pid-file"]);
  process.kill(pid, "SIGHUP");
  process.stdout.write(`sent SIGHUP to ${pid}: the daemon reloads its config file; its log says whether the new config was applied\n`);
  return 0;
}

/**
 * SQLite's online backup (better-sqlite3 `backup()`, sqlite.org/backup.html) from a separate
 * read-only connection: a consistent copy of the file, WAL included, while the daemon writes.
 * Written as FILE.partial, checked with `PRAGMA quick_check`, then renamed.
 */
export async function backupCommand(args: string[]): Promise<number> {
  const { values } = parseArgs({ args, options: { config: { type: "string" }, from: { type: "string" }, to: { type: "string" } } });
  if (!values.to) throw new Error("backup needs --to FILE (where the copy goes)");
  if (!values.config && !values.from) throw new Error("backup needs --config FILE (its storage.path is copied) or --from HISTORIAN.db");
  const from = resolve(values.from ?? loadConfig(values.config!).storage.path);
  const to = resolve(values.to);
  if (!existsSync(from)) throw new Error(`no historian at "${from}" to back up`);
  if (existsSync(to)) throw new Error(`"${to}" exists already: give a new file name (a backup never overwrites)`);
  const partial = `${to}.partial`;
  rmSync(partial, { force: true });
  const src = new Database(from, { readonly: true, fileMustExist: true });
  try {
    const t0 = Date.now();
    const r = await src.backup(partial);
    const copy = new Database(partial, { readonly: true });
    try {
      const check = copy.pragma("quick_check", { simple: true });
      if (check !== "ok") throw new Error(`the copy failed SQLite's quick_check: ${String(check)}`);
    } finally {
      copy.close();
    }
    renameSync(partial, to);
    process.stdout.write(`backed up ${from} to ${to}: ${r.totalPages} pages in ${Date.now() - t0} ms, quick_check ok\n`);
    return 0;
  } catch (e) {
    rmSync(partial, { force: true });
    throw e;
  } finally {
    src.close();
  }
}
