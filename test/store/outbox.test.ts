// The notification outbox in the historian's file: deduplication, the state written with the
// messages, attempts with backoff, the delivery log, a restart, and the migration that adds it.
import { join } from "node:path";
import Database from "better-sqlite3";
import { afterEach, beforeEach, describe, expect, it } from "vitest";
import type { Message } from "../../src/notify/message.js";
import { makeFields, subjectOf, textOf } from "../../src/notify/message.js";
import { seededRandom } from "../../src/notify/service.js";
import { Historian } from "../../src/store/historian.js";
import { LATEST_SCHEMA_VERSION, MIGRATIONS } from "../../src/store/migrations.js";
import { dedupKeyOf, Outbox, type OutboxItem } from "../../src/store/outbox.js";
import { tempDir } from "./helpers.js";

const T0 = Date.UTC(2026, 0, 6, 9);
const POLICY = { maxAttempts: 4, backoffBaseS: 10, backoffMaxS: 300, giveUpAfterS: 86_400 };

function message(eventKey: string, channel = "hook", person: string | null = null): Message {
  const fields = makeFields({ kind: "advisory", tier: "warning", site: "Tarnholm Works", plant: "Coal grinding line 2", advisoryId: "o2-margin-vm2", headline: "O2 margin at the mill outlet", atMs: T0, timeZone: "Europe/Berlin", linkBase: "https://millwarden.tarnholm.example" });
  return {
    eventKey,
    channel,
    recipient: person ? { kind: "person", id: person, name: person, address: `${person}@tarnholm.example` } : { kind: "channel" },
    subject: subjectOf(fields),
    text: textOf(fields),
    fields,
  };
}
const item = (m: Message): OutboxItem => ({ message: m, recipientKey: m.recipient.kind === "person" ? `person:${m.recipient.id}` : "channel", address: m.recipient.kind === "person" ? m.recipient.address : null });

describe("the outbox", () => {
  let dir: string;
  let cleanup: () => void;
  let path: string;
  let h: Historian;
  let box: Outbox;
  beforeEach(() => {
    ({ dir, cleanup } = tempDir());
    path = join(dir, "h.db");
    h = Historian.open({ path });
    box = Outbox.openBeside(h.path);
  });
  afterEach(() => {
    box.close();
    h.close();
    cleanup();
  });

  it("the historian's file is at the latest schema version, which has the outbox tables", () => {
    expect(LATEST_SCHEMA_VERSION).toBeGreaterThanOrEqual(5);
    const db = new Database(path, { readonly: true });
    const tables = db.prepare("SELECT name FROM sqlite_master WHERE type = 'table' ORDER BY name").pluck().all();
    db.close();
    expect(tables).toEqual(expect.arrayContaining(["notify_outbox", "notify_deliveries", "push_subscriptions", "notify_state"]));
  });

  it("a dedup key is entered once, whatever is handed in again; the state is stored with the messages", () => {
    const items = [item(message("o2-margin-vm2@1:raise")), item(message("o2-margin-vm2@1:raise", "mail", "anna"))];
    expect(box.commit(items, '{"version":1}', T0)).toEqual({ added: 2, duplicates: 0 });
    expect(box.commit(items, '{"version":1,"n":2}', T0 + 1000)).toEqual({ added: 0, duplicates: 2 });
    expect(box.entries().map((e) => e.dedupKey)).toEqual([dedupKeyOf("o2-margin-vm2@1:raise", "channel", "hook"), dedupKeyOf("o2-margin-vm2@1:raise", "person:anna", "mail")]);
    expect(box.loadState()).toBe('{"version":1,"n":2}');
    // Even once sent, the key stays taken.
    const [e] = box.due(T0);
    box.record(e!.id, { ok: true }, T0, 5, POLICY, () => 0);
    expect(box.commit(items.slice(0, 1), null, T0 + 2000).added).toBe(0);
  });

  it("messages and state go in together or not at all", () => {
    const db = new Database(path);
    // A trigger that refuses one particular row makes the transaction fail half way.
    db.exec("CREATE TRIGGER refuse BEFORE INSERT ON notify_outbox WHEN NEW.event_key = 'bad' BEGIN SELECT RAISE(ABORT, 'refused by the test'); END;");
    db.close();
    expect(() => box.commit([item(message("good")), item(message("bad"))], '{"version":1,"after":true}', T0)).toThrow(/refused by the test/);
    expect(box.entries()).toEqual([]);
    expect(box.loadState()).toBeNull();
  });

  it("a retryable failure comes back after the backoff; the result and the log row are written together; sent is final", () => {
    box.commit([item(message("e1"))], null, T0);
    const random = seededRandom(1);
    const expectDelays = (() => {
      const r = seededRandom(1);
      // Equal jitter: half of min(cap, base·2^(n−1)) fixed, half random.
      return [1, 2, 3].map((n) => {
        const full = Math.min(300_000, 10_000 * 2 ** (n - 1));
        return Math.round(full / 2 + (r() * full) / 2);
      });
    })();
    let now = T0;
    const [e] = box.due(now);
    expect(e).toMatchObject({ state: "pending", attempts: 0 });
    const r1 = box.record(e!.id, { ok: false, retry: true, error: "webhook http://127.0.0.1:9: ECONNREFUSED" }, now, 3, POLICY, random)!;
    expect(r1).toEqual({ state: "failed", nextAttemptMs: now + expectDelays[0]!, error: "webhook http://127.0.0.1:9: ECONNREFUSED" });
    expect(box.due(now + expectDelays[0]! - 1)).toEqual([]);
    now += expectDelays[0]!;
    expect(box.due(now)).toHaveLength(1);
    const r2 = box.record(e!.id, { ok: false, retry: true, error: "HTTP 503" }, now, 3, POLICY, random)!;
    expect(r2.nextAttemptMs).toBe(now + expectDelays[1]!);
    now = r2.nextAttemptMs!;
    expect(box.record(e!.id, { ok: true }, now, 12, POLICY, random)).toEqual({ state: "sent", nextAttemptMs: null, error: null });
    // Recording again (a second sender, a bug) changes nothing and logs nothing.
    expect(box.record(e!.id, { ok: true }, now + 1, 1, POLICY, random)).toBeNull();
    expect(box.due(now + 86_400_000)).toEqual([]);
    expect(box.get(e!.id)).toMatchObject({ state: "sent", attempts: 3, sentAtMs: now, lastError: null });
    expect(box.deliveries(e!.id).map((d) => [d.attempt, d.outcome])).toEqual([
      [1, "retry"],
      [2, "retry"],
      [3, "sent"],
    ]);
  });

  it("hands out warnings first when there is a backlog, then in the order they fell due", () => {
    const caution = message("c1");
    caution.fields = { ...caution.fields, tier: "caution" };
    box.commit([item(caution), item(message("w1"))], null, T0);
    expect(box.due(T0).map((e) => e.eventKey)).toEqual(["w1", "c1"]);
  });

  it("a permanent failure is dead at once; too many attempts make it dead too", () => {
    box.commit([item(message("perm")), item(message("flaky"))], null, T0);
    const [perm, flaky] = box.due(T0);
    expect(box.record(perm!.id, { ok: false, retry: false, error: "HTTP 404" }, T0, 1, POLICY, () => 0)).toEqual({ state: "dead", nextAttemptMs: null, error: "HTTP 404 (not worth retrying)" });
    let now = T0;
    for (let i = 1; i <= 3; i++) {
      const r = box.record(flaky!.id, { ok: false, retry: true, error: "timeout" }, now, 1, POLICY, () => 0)!;
      expect(r.state).toBe("failed");
      now = r.nextAttemptMs!;
    }
    expect(box.record(flaky!.id, { ok: false, retry: true, error: "timeout" }, now, 1, POLICY, () => 0)).toMatchObject({ state: "dead", error: "timeout (gave up after 4 attempts)" });
    expect(box.entries({ state: "dead" })).toHaveLength(2);
  });

  it("channel figures: last success, last failure and its error, failing since when, entries per state", () => {
    box.commit([item(message("a")), item(message("b")), item(message("c", "mail", "anna"))], null, T0);
    const [a, b, c] = box.due(T0);
    box.record(a!.id, { ok: true }, T0 + 10, 1, POLICY, () => 0);
    box.record(b!.id, { ok: false, retry: true, error: "HTTP 502" }, T0 + 20, 1, POLICY, () => 0);
    box.record(c!.id, { ok: false, retry: false, error: "550 no such user" }, T0 + 30, 1, POLICY, () => 0);
    expect(box.channelStats()).toEqual([
      { channel: "hook", lastSuccessMs: T0 + 10, lastFailureMs: T0 + 20, lastError: "HTTP 502", failingSinceMs: T0 + 20, pending: 0, failed: 1, dead: 0, sent: 1 },
      { channel: "mail", lastSuccessMs: null, lastFailureMs: T0 + 30, lastError: "550 no such user (not worth retrying)", failingSinceMs: T0 + 30, pending: 0, failed: 0, dead: 1, sent: 0 },
    ]);
  });

  it("a restart finds the undelivered entries and never hands out a sent one again", () => {
    box.commit([item(message("r1")), item(message("r2")), item(message("r3"))], null, T0);
    const first = box.due(T0)[0]!;
    box.record(first.id, { ok: true }, T0, 1, POLICY, () => 0);
    box.close();
    h.close();
    h = Historian.open({ path });
    box = Outbox.openBeside(h.path);
    expect(box.due(T0 + 1).map((e) => e.eventKey)).toEqual(["r2", "r3"]);
  });

  it("prunes sent and dead entries older than a time, with their log; keeps what waits", () => {
    box.commit([item(message("old-sent")), item(message("old-waiting"))], null, T0);
    const [s] = box.due(T0);
    box.record(s!.id, { ok: true }, T0, 1, POLICY, () => 0);
    expect(box.prune(T0 + 1)).toBe(1);
    expect(box.entries().map((e) => e.eventKey)).toEqual(["old-waiting"]);
    expect(box.deliveries()).toEqual([]);
  });

  it("keeps Web Push subscriptions per person, and checks what it is given", () => {
    box.addSubscription({ endpoint: "https://push.example/a", personId: "anna", p256dh: "BPk", auth: "xyz", createdAtMs: T0 });
    box.addSubscription({ endpoint: "https://push.example/b", personId: "anna", p256dh: "BPk2", auth: "xyz2", createdAtMs: T0 + 1 });
    expect(box.subscriptionsOf("anna").map((s) => s.endpoint)).toEqual(["https://push.example/a", "https://push.example/b"]);
    expect(box.removeSubscription("https://push.example/a")).toBe(true);
    expect(box.subscription("https://push.example/a")).toBeNull();
    expect(() => box.addSubscription({ endpoint: "http://push.example/c", personId: "anna", p256dh: "x", auth: "y", createdAtMs: T0 })).toThrow(/expected an https:\/\/ endpoint/);
    expect(() => box.addSubscription({ endpoint: "https://push.example/c", personId: "anna", p256dh: "", auth: "y", createdAtMs: T0 })).toThrow(/expected a non-empty p256dh/);
  });
});

describe("migration 5 on a file of an earlier version", () => {
  it("adds the outbox to a version-4 file and keeps what was there", () => {
    const { dir, cleanup } = tempDir();
    try {
      const path = join(dir, "v4.db");
      const db = new Database(path);
      db.pragma("journal_mode = WAL");
      for (const m of MIGRATIONS.filter((x) => x.version <= 4)) {
        db.transaction(() => {
          if (m.version === 1) db.exec("CREATE TABLE schema_migrations (version INTEGER PRIMARY KEY, description TEXT NOT NULL, applied_at_ms INTEGER NOT NULL);");
          db.exec(m.sql);
          m.run?.(db);
          if (m.version === 1) db.prepare("INSERT INTO meta (key, value) VALUES ('application', 'millwarden')").run();
          db.prepare("INSERT INTO schema_migrations (version, description, applied_at_ms) VALUES (?, ?, ?)").run(m.version, m.description, T0);
        })();
      }
      db.pragma("user_version = 4");
      db.prepare("INSERT INTO advisory_state (advisory_id, body, updated_at_ms) VALUES ('x', '{}', 1)").run();
      db.close();
      const h = Historian.open({ path, nowMs: () => T0 + 1 });
      const box = Outbox.openBeside(h.path);
      expect(box.commit([item(message("after-upgrade"))], null, T0).added).toBe(1);
      box.close();
      h.close();
      const check = new Database(path, { readonly: true });
      expect(check.prepare("SELECT version FROM schema_migrations WHERE version = 5").pluck().get()).toBe(5);
      expect(check.prepare("SELECT count(*) FROM advisory_state").pluck().get()).toBe(1);
      check.close();
    } finally {
      cleanup();
    }
  });

  it("an in-memory historian gets a private in-memory outbox", () => {
    const box = Outbox.openBeside(":memory:");
    expect(box.commit([item(message("m"))], null, T0).added).toBe(1);
    box.close();
  });

  it("refuses a database without the outbox, saying what it expected", () => {
    const db = new Database(":memory:");
    expect(() => new Outbox(db)).toThrow(/expected schema version 5 or later/);
    db.close();
  });
});
