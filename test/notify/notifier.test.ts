// The pure routing and escalation core on a simulated clock: nothing here waits or reads a clock.
// Times are UTC instants; site time is Europe/Berlin (CET = UTC+1 in winter, CEST = UTC+2 in
// summer; changes in 2026 on 29 March and 25 October at 01:00 UTC: IANA tz database as shipped
// with Node's ICU, see zone.test.ts).
import { describe, expect, it } from "vitest";
import { ADVISORY_ONLY } from "../../src/core/types.js";
import type { Message } from "../../src/notify/message.js";
import { Notifier, type PersistedNotifier } from "../../src/notify/notifier.js";
import { H, MIN, kinds, makeNotifier, nuisance, tr, who } from "./helpers.js";

const utc = (y: number, mo: number, d: number, h = 0, mi = 0, s = 0) => Date.UTC(y, mo - 1, d, h, mi, s);
const S = 1000;
/** Tuesday 6 January 2026, 10:00 CET: week 0 of the rotation, Anna primary, Jonas secondary, Mira supervisor. */
const T0 = utc(2026, 1, 6, 9);

/** Tick from `fromMs` to `toMs` in steps, collecting every message. */
function run(n: Notifier, fromMs: number, toMs: number, stepMs = MIN): Message[] {
  const out: Message[] = [];
  for (let t = fromMs; t <= toMs; t += stepMs) out.push(...n.tick(t).messages);
  return out;
}

/** Tick only at the times the notifier asks for (nextDueMs), from `fromMs` up to `toMs`. */
function runByDue(n: Notifier, fromMs: number, toMs: number): Message[] {
  const out: Message[] = [];
  let r = n.tick(fromMs);
  out.push(...r.messages);
  while (r.nextDueMs !== null && r.nextDueMs <= toMs) {
    r = n.tick(r.nextDueMs);
    out.push(...r.messages);
  }
  return out;
}

describe("routing by tier and unit to the on-call roster", () => {
  it("a caution goes to the primary on call (on each of their contacts) and to the route's channel", () => {
    const n = makeNotifier();
    const r = n.handle([tr("co-gradient-bf2", "raise", T0)], T0);
    expect(who(r.messages)).toEqual(["hook→channel", "mail→anna", "push→anna"]);
    expect(kinds(r.messages)).toEqual(["advisory", "advisory", "advisory"]);
    // A caution is not escalated nor repeated: nothing waits on time.
    expect(r.nextDueMs).toBeNull();
  });

  it("a notice goes only where its route says (here the webhook)", () => {
    const n = makeNotifier();
    expect(who(n.handle([tr("dewpoint-bf2", "raise", T0, { tier: "notice" })], T0).messages)).toEqual(["hook→channel"]);
  });

  it("routes by unit: a route for fs2 only does not take bf2's advisories", () => {
    const n = makeNotifier({ routes: [{ tiers: ["caution"], units: ["fs2"], roster: "process" }] });
    expect(n.handle([tr("co-gradient-bf2", "raise", T0)], T0).messages).toEqual([]);
    expect(who(n.handle([tr("co-silo-fs2", "raise", T0)], T0).messages)).toEqual(["mail→anna", "push→anna"]);
  });

  it("follows the rotation (week 1: Jonas) and the stand-in (Lena, 7 January 07:00 to 8 January 07:00 CET)", () => {
    const n = makeNotifier();
    const inWeek1 = utc(2026, 1, 13, 9);
    expect(who(n.handle([tr("co-gradient-bf2", "raise", inWeek1)], inWeek1).messages)).toEqual(["hook→channel", "mail→jonas"]);
    const standIn = utc(2026, 1, 7, 6);
    expect(who(n.handle([tr("co-silo-fs2", "raise", standIn)], standIn).messages)).toEqual(["hook→channel", "mail→lena"]);
    const justBefore = utc(2026, 1, 7, 5, 59, 59);
    expect(who(n.handle([tr("dewpoint-bf2", "raise", justBefore, { tier: "caution" })], justBefore).messages)).toEqual(["hook→channel", "mail→anna", "push→anna"]);
  });
});

describe("what a message says", () => {
  it("advisory only, plant, unit, indicator, value, limit, trend, time in UTC and site time, and a link", () => {
    const n = makeNotifier();
    const t = tr("o2-margin-vm2", "raise", T0, { tier: "warning", value: 0.4, limit: 1, why: "O2 margin 0.4 %-pt reached the warning threshold 1.0 %-pt" });
    const m = n.handle([t], T0, { trend: (id) => (id === "o2-margin-vm2" ? -0.2 : null) }).messages.find((x) => x.channel === "mail")!;
    expect(m.subject).toBe("[millwarden] WARNING vm2 O2 margin at the mill outlet (advisory only)");
    for (const line of [
      "ADVISORY ONLY. O2 margin at the mill outlet",
      "Plant:      Tarnholm Works, Coal grinding line 2",
      "Unit:       Vertical roller mill 2 (vm2)",
      "Indicator:  Vertical roller mill 2 O2 margin to the limit",
      "Value:      0.40 %-pt",
      "Limit:      1.00 %-pt (warning, low limit)",
      "Trend:      Vertical roller mill 2 O2 trend -0.20 %-pt/min",
      // 09:00 UTC is 10:00 CET in January.
      "Time:       2026-01-06 09:00:00 UTC / 2026-01-06 10:00:00 CET (Europe/Berlin)",
      "Reason:     O2 margin 0.4 %-pt reached the warning threshold 1.0 %-pt",
      "Open: https://millwarden.tarnholm.example/#advisory=o2-margin-vm2",
      ADVISORY_ONLY,
    ])
      expect(m.text).toContain(line);
    expect(m.text).toMatch(/Note: +If not acknowledged within 10 min, the next on call is paged; a reminder follows every 30 min/);
    expect(m.fields).toMatchObject({ advisoryOnly: ADVISORY_ONLY, kind: "advisory", tier: "warning", plant: "Coal grinding line 2", value: 0.4, limit: 1, trend: { value: -0.2, unit: "%-pt/min" } });
    expect(m.recipient).toEqual({ kind: "person", id: "anna", name: "Anna Berg", address: "anna.berg@tarnholm.example" });
  });

  it("says the trend is not known when there is none", () => {
    const n = makeNotifier();
    const m = n.handle([tr("co-gradient-bf2", "raise", T0)], T0).messages[0]!;
    expect(m.text).toContain("Trend:      not known");
  });

  it("the same transition always gives the same event key (the outbox deduplicates by it)", () => {
    const a = makeNotifier().handle([tr("co-gradient-bf2", "raise", T0)], T0).messages;
    const b = makeNotifier().handle([tr("co-gradient-bf2", "raise", T0)], T0).messages;
    expect(a.map((m) => m.eventKey)).toEqual(b.map((m) => m.eventKey));
    expect(a[0]!.eventKey).toBe(`co-gradient-bf2@${T0}:raise`);
  });
});

describe("escalation: primary → secondary → supervisor, then reminders, on a simulated clock", () => {
  it("pages the next in the chain every 10 min without acknowledgement, reminds everyone paged, stops at the acknowledgement", () => {
    const n = makeNotifier();
    const first = n.handle([tr("o2-margin-vm2", "raise", T0, { tier: "warning" })], T0);
    expect(who(first.messages)).toEqual(["hook→channel", "mail→anna", "push→anna"]);
    expect(first.nextDueMs).toBe(T0 + 600 * S);

    expect(n.tick(T0 + 600 * S - 1).messages).toEqual([]);
    const second = n.tick(T0 + 600 * S);
    expect(who(second.messages)).toEqual(["mail→jonas"]);
    expect(second.messages[0]!.fields.kind).toBe("escalation");
    expect(second.messages[0]!.text).toContain("You are secondary on call for process on call. Paged before you: Anna Berg.");
    expect(second.messages[0]!.subject).toBe("[millwarden] ESCALATED WARNING vm2 O2 margin at the mill outlet: not acknowledged after 10 min (advisory only)");
    expect(second.nextDueMs).toBe(T0 + 1200 * S);

    const third = n.tick(T0 + 1200 * S);
    expect(who(third.messages)).toEqual(["mail→mira"]);
    expect(third.messages[0]!.text).toContain("You are supervisor on call for process on call. Paged before you: Anna Berg, Jonas Lind.");
    // The chain is at its end; the reminder is next.
    expect(third.nextDueMs).toBe(T0 + 1800 * S);

    const reminder = n.tick(T0 + 1800 * S);
    expect(who(reminder.messages)).toEqual(["mail→anna", "mail→jonas", "mail→mira", "push→anna"]);
    expect(kinds(reminder.messages)).toEqual(["reminder", "reminder", "reminder", "reminder"]);

    // Jonas acknowledges in the control room: the others stand down, he is not told his own action.
    const ack = n.handle([tr("o2-margin-vm2", "ack", T0 + 1900 * S, { tier: "warning", by: "jonas" })], T0 + 1900 * S);
    expect(who(ack.messages)).toEqual(["hook→channel", "mail→anna", "mail→mira", "push→anna"]);
    expect(ack.messages[0]!.fields.kind).toBe("resolved");
    expect(ack.messages[0]!.subject).toContain("acknowledged by jonas");
    expect(ack.nextDueMs).toBeNull();
    expect(run(n, T0 + 1900 * S, T0 + 6 * H)).toEqual([]);
  });

  it("ticking each minute and ticking only when due give the same messages", () => {
    const a = makeNotifier();
    const b = makeNotifier();
    const raise = [tr("o2-margin-vm2", "raise", T0, { tier: "warning" })];
    a.handle(raise, T0);
    b.handle(raise, T0);
    const byMinute = run(a, T0, T0 + 4 * H);
    const byDue = runByDue(b, T0, T0 + 4 * H);
    expect(byDue.map((m) => `${m.eventKey} ${m.channel}`)).toEqual(byMinute.map((m) => `${m.eventKey} ${m.channel}`));
    // Two escalation steps, then reminders.max = 3 reminders (30, 60, 90 min), then silence.
    expect([...new Set(byMinute.map((m) => m.eventKey.split(":").pop()))]).toEqual(["escalation-1", "escalation-2", "reminder-1", "reminder-2", "reminder-3"]);
    expect(byMinute.filter((m) => m.fields.kind === "reminder").at(-1)!.text).toContain("Last reminder (3 of 3)");
  });

  it("a roster with nobody in a role goes on to the next role", () => {
    const n = makeNotifier({
      rosters: [{ id: "process", rotation: { startsAt: "2026-01-05T07:00", weeks: [{ primary: "anna" }] }, supervisor: "mira" }],
    });
    n.handle([tr("o2-margin-vm2", "raise", T0, { tier: "warning" })], T0);
    expect(who(n.tick(T0 + 600 * S).messages)).toEqual(["mail→mira"]);
  });

  it("the person paged at each step is who is on call then (a handover during the episode)", () => {
    const n = makeNotifier();
    // 06:55 CET on Monday 12 January, five minutes before the handover to week 1 (Jonas primary, Anna secondary).
    const t = utc(2026, 1, 12, 5, 55);
    expect(who(n.handle([tr("o2-margin-vm2", "raise", t, { tier: "warning" })], t).messages)).toEqual(["hook→channel", "mail→anna", "push→anna"]);
    // At 07:05 the secondary is Anna, already paged: the chain goes on to the supervisor.
    expect(who(n.tick(t + 600 * S).messages)).toEqual(["mail→mira"]);
  });

  it("a latched advisory keeps escalating after its condition clears; the reset ends it", () => {
    const n = makeNotifier();
    n.handle([tr("o2-margin-vm2", "raise", T0, { tier: "warning" })], T0);
    expect(n.handle([tr("o2-margin-vm2", "clear", T0 + 60 * S, { tier: "warning", from: "unack", to: "latched" })], T0).messages).toEqual([]);
    expect(who(n.tick(T0 + 600 * S).messages)).toEqual(["mail→jonas"]);
    const reset = n.handle([tr("o2-margin-vm2", "reset", T0 + 700 * S, { tier: "warning", by: "mira" })], T0 + 700 * S);
    expect(who(reset.messages)).toEqual(["hook→channel", "mail→anna", "mail→jonas", "push→anna"]);
    expect(reset.messages[0]!.subject).toContain("reset by mira");
  });

  it("clear of a plain advisory ends it: the people paged and the channel are told it returned to normal", () => {
    const n = makeNotifier();
    n.handle([tr("o2-margin-vm2", "raise", T0, { tier: "warning" })], T0);
    const clear = n.handle([tr("o2-margin-vm2", "clear", T0 + 300 * S, { tier: "warning", from: "unack", to: "rtn-unack" })], T0 + 300 * S);
    expect(who(clear.messages)).toEqual(["hook→channel", "mail→anna", "push→anna"]);
    expect(clear.messages[0]!.subject).toContain("returned to normal");
    expect(clear.nextDueMs).toBeNull();
  });

  it("a caution cleared tells only the channel (nobody was chased for it)", () => {
    const n = makeNotifier();
    n.handle([tr("co-gradient-bf2", "raise", T0)], T0);
    expect(who(n.handle([tr("co-gradient-bf2", "clear", T0 + MIN, { from: "unack", to: "rtn-unack" })], T0).messages)).toEqual(["hook→channel"]);
  });

  it("shelving ends the chase; the one who shelved is not told", () => {
    const n = makeNotifier();
    n.handle([tr("o2-margin-vm2", "raise", T0, { tier: "warning" })], T0);
    const r = n.handle([tr("o2-margin-vm2", "shelve", T0 + MIN, { tier: "warning", by: "anna", why: "analyser swap" })], T0 + MIN);
    expect(who(r.messages)).toEqual(["hook→channel"]);
    expect(r.messages[0]!.subject).toContain("shelved by anna: analyser swap");
    expect(r.nextDueMs).toBeNull();
  });

  it("a caution that becomes a warning while unacknowledged is sent again as a warning and starts the chain", () => {
    const n = makeNotifier();
    n.handle([tr("o2-margin-vm2", "raise", T0)], T0);
    const r = n.handle([tr("o2-margin-vm2", "escalate", T0 + MIN, { tier: "warning" })], T0 + MIN);
    expect(who(r.messages)).toEqual(["hook→channel", "mail→anna", "push→anna"]);
    expect(r.messages[0]!.subject).toBe("[millwarden] WARNING vm2 O2 margin at the mill outlet: now warning (advisory only)");
    expect(r.nextDueMs).toBe(T0 + MIN + 600 * S);
  });

  it("a re-alert after acknowledgement asks again and restarts the chain", () => {
    const n = makeNotifier();
    n.handle([tr("o2-margin-vm2", "raise", T0, { tier: "warning" })], T0);
    n.handle([tr("o2-margin-vm2", "ack", T0 + MIN, { tier: "warning", by: "anna" })], T0 + MIN);
    const t = T0 + 2 * H;
    const r = n.handle([tr("o2-margin-vm2", "re-alert", t, { tier: "warning" })], t);
    expect(r.messages[0]!.subject).toContain("still active after acknowledgement");
    expect(r.nextDueMs).toBe(t + 600 * S);
  });

  it("an acknowledgement from a notification stops the chain and tells the others", () => {
    const n = makeNotifier();
    n.handle([tr("o2-margin-vm2", "raise", T0, { tier: "warning" })], T0);
    n.tick(T0 + 600 * S);
    const r = n.acknowledge({ advisoryId: "o2-margin-vm2", by: "jonas", atMs: T0 + 700 * S });
    expect(who(r.messages)).toEqual(["hook→channel", "mail→anna", "push→anna"]);
    expect(r.messages[0]!.subject).toContain("acknowledged by jonas from a notification");
    expect(r.nextDueMs).toBeNull();
  });

  it("reminders show the value now when the context knows it", () => {
    const n = makeNotifier({ escalation: { tiers: [] } });
    n.handle([tr("o2-margin-vm2", "raise", T0, { tier: "warning", value: 0.9, limit: 1 })], T0);
    const r = n.tick(T0 + 1800 * S, { value: () => 0.3 });
    expect(r.messages[0]!.text).toContain("Value:      0.30 %-pt");
    expect(r.messages[0]!.text).toContain("Limit:      1.00 %-pt");
  });
});

describe("quiet hours (22:00–06:00 site time) hold notices and cautions, never warnings", () => {
  it("a caution at 22:30 waits for one digest at 06:00; a warning at 23:00 goes at once", () => {
    const n = makeNotifier({ escalation: { tiers: [] }, reminders: { tiers: [] } });
    const night = utc(2026, 1, 6, 21, 30); // 22:30 CET
    const held = n.handle([tr("co-gradient-bf2", "raise", night, { value: 7.5, limit: 5 }), tr("dewpoint-bf2", "raise", night + MIN, { tier: "notice" })], night);
    expect(held.messages).toEqual([]);
    // 06:00 CET on 7 January = 05:00 UTC.
    expect(held.nextDueMs).toBe(utc(2026, 1, 7, 5));
    const warning = n.handle([tr("o2-margin-vm2", "raise", night + 30 * MIN, { tier: "warning" })], night + 30 * MIN);
    expect(who(warning.messages)).toEqual(["hook→channel", "mail→anna", "push→anna"]);

    expect(run(n, night, utc(2026, 1, 7, 4, 59))).toEqual([]);
    const digest = n.tick(utc(2026, 1, 7, 5));
    expect(who(digest.messages)).toEqual(["hook→channel", "mail→anna", "push→anna"]);
    const hook = digest.messages.find((m) => m.channel === "hook")!;
    expect(hook.fields.kind).toBe("digest");
    expect(hook.fields.items).toEqual(["2026-01-06 22:30:00 CET CAUTION bf2 CO rising at the bag filter: 7.50 ppm/min (limit 5.00 ppm/min)", "2026-01-06 22:31:00 CET NOTICE bf2 Dew point margin at the filter outlet: 1.50 K (limit 2.00 K)"]);
    // Anna got only the caution: the notice's route goes to the webhook alone.
    expect(digest.messages.find((m) => m.channel === "mail")!.fields.items).toHaveLength(1);
    expect(n.tick(utc(2026, 1, 7, 6)).messages).toEqual([]);
  });

  it("the night of the spring change is an hour shorter: the digest comes at 06:00 CEST = 04:00 UTC", () => {
    const n = makeNotifier();
    const night = utc(2026, 3, 28, 21, 30); // 22:30 CET, Saturday 28 March
    n.handle([tr("co-gradient-bf2", "raise", night)], night);
    expect(run(n, night, utc(2026, 3, 29, 3, 59, 59), 5 * MIN)).toEqual([]);
    // Week 11 of the rotation (23 March 07:00 CET onwards): Jonas is primary.
    expect(who(n.tick(utc(2026, 3, 29, 4)).messages)).toEqual(["hook→channel", "mail→jonas"]);
  });

  it("the night of the autumn change is an hour longer: the digest comes at 06:00 CET = 05:00 UTC", () => {
    const n = makeNotifier({ rosters: [{ id: "process", rotation: { startsAt: "2026-10-19T07:00", weeks: [{ primary: "anna", secondary: "jonas" }] }, supervisor: "mira" }] });
    const night = utc(2026, 10, 24, 20, 30); // 22:30 CEST, Saturday 24 October
    const r = n.handle([tr("co-gradient-bf2", "raise", night)], night);
    expect(r.nextDueMs).toBe(utc(2026, 10, 25, 5));
    expect(run(n, night, utc(2026, 10, 25, 4, 59, 59), 5 * MIN)).toEqual([]);
    expect(n.tick(utc(2026, 10, 25, 5)).messages.map((m) => m.fields.kind)).toEqual(["digest", "digest", "digest"]);
  });

  it("quiet hours on chosen days only (here Saturday and Sunday, all day)", () => {
    const n = makeNotifier({ quietHours: [{ days: ["sat", "sun"], from: "00:00", to: "24:00" }] });
    const saturday = utc(2026, 1, 10, 11);
    expect(n.handle([tr("co-gradient-bf2", "raise", saturday)], saturday).messages).toEqual([]);
    expect(n.isQuiet(utc(2026, 1, 11, 22, 59))).toBe(true); // Sunday 23:59 CET
    expect(n.isQuiet(utc(2026, 1, 11, 23))).toBe(false); // Monday 00:00 CET
    expect(kinds(n.tick(utc(2026, 1, 11, 23)).messages)).toEqual(["digest", "digest", "digest"]);
  });
});

describe("maintenance windows drop notices and cautions of their units, never warnings", () => {
  const inWindow = utc(2026, 2, 2, 9); // 10:00 CET on 2 February, silo fs2 under inspection

  it("drops a caution of fs2 (no digest either), lets bf2's through, and sends fs2's warning", () => {
    const n = makeNotifier({ quietHours: [] });
    expect(n.handle([tr("co-silo-fs2", "raise", inWindow)], inWindow).messages).toEqual([]);
    // Week 4 of the rotation (from Monday 2 February 07:00 CET): Anna is primary.
    expect(who(n.handle([tr("co-gradient-bf2", "raise", inWindow)], inWindow).messages)).toEqual(["hook→channel", "mail→anna", "push→anna"]);
    expect(who(n.handle([tr("co-silo-fs2", "escalate", inWindow + MIN, { tier: "warning" })], inWindow).messages)).toEqual(["hook→channel", "mail→anna", "push→anna"]);
    expect(run(n, inWindow, inWindow + 24 * H, 10 * MIN).filter((m) => m.fields.kind === "digest")).toEqual([]);
  });

  it("a warning during quiet hours and maintenance goes out at once", () => {
    const n = makeNotifier({ maintenanceWindows: [{ from: "2026-02-02T00:00", to: "2026-02-03T00:00", reason: "plant shutdown" }] });
    const night = utc(2026, 2, 2, 1); // 02:00 CET
    expect(n.handle([tr("co-gradient-bf2", "raise", night)], night).messages).toEqual([]);
    // Still week 3 (the handover is Monday 07:00): Jonas is primary.
    expect(who(n.handle([tr("o2-margin-vm2", "raise", night, { tier: "warning" })], night).messages)).toEqual(["hook→channel", "mail→jonas"]);
  });
});

describe("nuisance: chatter is one message, a flood one summary", () => {
  it("a chattering advisory: the raise that made it chatter is told by one chatter message; later raises are not sent until a higher tier", () => {
    const n = makeNotifier({ quietHours: [] });
    const t = T0;
    const raise = (s: number, o = {}) => tr("co-gradient-bf2", "raise", t + s * S, { from: "rtn-unack", ...o });
    const clear = (s: number, tier: "caution" | "warning" = "caution") => tr("co-gradient-bf2", "clear", t + s * S, { from: "unack", to: "rtn-unack", tier });
    const all: Message[] = [];
    const step = (events: Parameters<Notifier["handle"]>[0]) => {
      const ms = n.handle(events, t).messages;
      all.push(...ms);
      return ms;
    };
    expect(kinds(step([raise(0, { from: "normal" })]))).toEqual(["advisory", "advisory", "advisory"]);
    expect(who(step([clear(10)]))).toEqual(["hook→channel"]);
    expect(kinds(step([raise(20)]))).toEqual(["advisory", "advisory", "advisory"]);
    step([clear(25)]);
    // Third raise within 60 s: the core emits the raise, then the chatter event.
    const chatter = step([raise(30), nuisance("chatter", t + 30 * S, "co-gradient-bf2")]);
    expect(kinds(chatter)).toEqual(["chatter", "chatter", "chatter"]);
    expect(chatter[0]!.fields.note).toBe("Further raises of this advisory are not sent one by one until it settles (a higher tier still is).");
    expect(step([clear(35)])).toEqual([]);
    expect(step([raise(40)])).toEqual([]);
    // A higher tier still goes out.
    const up = step([tr("co-gradient-bf2", "escalate", t + 45 * S, { tier: "warning" })]);
    expect(who(up)).toEqual(["hook→channel", "mail→anna", "push→anna"]);
    expect(step([clear(50, "warning"), raise(55, { tier: "warning" })])).toEqual([]);
    // It settles while unacknowledged: the chain goes on as for any warning.
    expect(step([nuisance("chatter-end", t + 400 * S, "co-gradient-bf2", 0)])).toEqual([]);
    expect(n.activeEpisodes().map((e) => e.advisoryId)).toEqual(["co-gradient-bf2"]);
  });

  it("chatter that ends with the advisory normal tells those chased to stand down", () => {
    const n = makeNotifier({ quietHours: [] });
    n.handle([tr("o2-margin-vm2", "raise", T0, { tier: "warning" }), nuisance("chatter", T0, "o2-margin-vm2")], T0);
    n.handle([tr("o2-margin-vm2", "clear", T0 + 5 * S, { tier: "warning", from: "unack", to: "rtn-unack" })], T0);
    // Still chased while it chatters.
    expect(who(n.tick(T0 + 600 * S).messages)).toEqual(["mail→jonas"]);
    const end = n.handle([nuisance("chatter-end", T0 + 700 * S, "o2-margin-vm2", 0)], T0 + 700 * S);
    expect(who(end.messages)).toEqual(["hook→channel", "mail→anna", "mail→jonas", "push→anna"]);
    expect(end.messages[0]!.subject).toContain("no longer chattering");
  });

  it("a flood: one summary at the start, notices and cautions held and listed at the end, warnings sent one by one", () => {
    const n = makeNotifier({ quietHours: [] });
    const start = n.handle([tr("co-gradient-bf2", "raise", T0), nuisance("flood-start", T0, "dewpoint-bf2", 11)], T0);
    expect(kinds(start.messages)).toEqual(["advisory", "advisory", "advisory", "flood-start", "flood-start", "flood-start"]);
    const summary = start.messages.find((m) => m.fields.kind === "flood-start")!;
    expect(summary.subject).toBe("[millwarden] FLOOD bf2 Advisory flood at control-room: 11 advisories, first out: Dew point margin at the filter outlet (advisory only)");
    expect(summary.text).toContain("warnings are still sent one by one");
    expect(n.handle([tr("dewpoint-bf2", "raise", T0 + MIN), tr("co-silo-fs2", "raise", T0 + 2 * MIN, { tier: "notice" })], T0).messages).toEqual([]);
    expect(who(n.handle([tr("o2-margin-vm2", "raise", T0 + 3 * MIN, { tier: "warning" })], T0).messages)).toEqual(["hook→channel", "mail→anna", "push→anna"]);
    const end = n.handle([nuisance("flood-end", T0 + 20 * MIN, "dewpoint-bf2", 4)], T0 + 20 * MIN);
    expect(kinds(end.messages)).toEqual(["flood-end", "flood-end", "flood-end"]);
    expect(end.messages[0]!.fields.items).toEqual([
      "2026-01-06 10:01:00 CET CAUTION bf2 Dew point margin at the filter outlet: 1.50 K (limit 2.00 K)",
      "2026-01-06 10:02:00 CET NOTICE fs2 CO rising in the fine-coal silo: 1.50 ppm/h (limit 2.00 ppm/h)",
    ]);
    expect(end.messages[0]!.subject).toContain("2 notices and cautions were not sent one by one");
  });
});

describe("daily test message per channel, at a local time, across daylight-saving changes", () => {
  const withTests = () =>
    makeNotifier({
      channels: [
        { id: "mail", kind: "email", host: "127.0.0.1", port: 2525, tls: "none", from: "millwarden@tarnholm.example", dailyTest: { at: "08:00", to: ["anna", "jonas"] } },
        { id: "push", kind: "webpush", subject: "mailto:ops@tarnholm.example" },
        { id: "hook", kind: "webhook", url: "http://127.0.0.1:9/hook", secretEnv: "MW_HOOK_KEY", dailyTest: { at: "02:30" } },
      ],
      quietHours: [],
    });

  it("fires once a day at the local time, the skipped 02:30 of the spring change at 03:30 CEST", () => {
    const n = withTests();
    const got = runByDue(n, utc(2026, 3, 28, 12), utc(2026, 3, 30, 12));
    expect(got.map((m) => `${m.eventKey} ${m.channel}→${m.recipient.kind === "person" ? m.recipient.id : "channel"} ${new Date(m.fields.atMs).toISOString()}`)).toEqual([
      "test:hook:2026-03-29 hook→channel 2026-03-29T01:30:00.000Z",
      "test:mail:2026-03-29 mail→anna 2026-03-29T06:00:00.000Z",
      "test:mail:2026-03-29 mail→jonas 2026-03-29T06:00:00.000Z",
      "test:hook:2026-03-30 hook→channel 2026-03-30T00:30:00.000Z",
      "test:mail:2026-03-30 mail→anna 2026-03-30T06:00:00.000Z",
      "test:mail:2026-03-30 mail→jonas 2026-03-30T06:00:00.000Z",
    ]);
    // Ticking every minute finds the same.
    expect(run(withTests(), utc(2026, 3, 28, 12), utc(2026, 3, 30, 12)).map((m) => m.eventKey)).toEqual(got.map((m) => m.eventKey));
  });

  it("the repeated 02:30 of the autumn change fires once, at the first", () => {
    const got = run(withTests(), utc(2026, 10, 24, 12), utc(2026, 10, 26, 3)).filter((m) => m.channel === "hook");
    expect(got.map((m) => new Date(m.fields.atMs).toISOString())).toEqual(["2026-10-25T00:30:00.000Z", "2026-10-26T01:30:00.000Z"]);
    expect(got[0]!.text).toContain("This test says nothing about the plant.");
    expect(got[0]!.text).toContain(ADVISORY_ONLY);
  });

  it("does not fire at the first tick after a start, even past the hour", () => {
    expect(withTests().tick(utc(2026, 3, 29, 10)).messages).toEqual([]);
  });
});

describe("what a restart keeps", () => {
  it("an escalation under way carries on after persist and restore, with the same event keys", () => {
    const a = makeNotifier();
    a.handle([tr("o2-margin-vm2", "raise", T0, { tier: "warning" })], T0);
    a.tick(T0 + 600 * S);
    const saved = JSON.parse(JSON.stringify(a.persist())) as PersistedNotifier;
    const b = makeNotifier();
    b.restore(saved);
    b.reconcile([{ id: "o2-margin-vm2", state: "unack" }]);
    const fromA = a.tick(T0 + 1200 * S).messages;
    const fromB = b.tick(T0 + 1200 * S).messages;
    expect(fromB.map((m) => `${m.eventKey}|${m.channel}`)).toEqual(fromA.map((m) => `${m.eventKey}|${m.channel}`));
    expect(who(fromB)).toEqual(["mail→mira"]);
  });

  it("an episode whose advisory was acknowledged or changed meanwhile ends without a message", () => {
    const a = makeNotifier();
    a.handle([tr("o2-margin-vm2", "raise", T0, { tier: "warning" })], T0);
    const b = makeNotifier();
    b.restore(a.persist());
    b.reconcile([{ id: "o2-margin-vm2", state: "ack" }]);
    expect(run(b, T0, T0 + 2 * H)).toEqual([]);
  });

  it("a held digest survives", () => {
    const a = makeNotifier();
    const night = utc(2026, 1, 6, 22);
    a.handle([tr("co-gradient-bf2", "raise", night)], night);
    const b = makeNotifier();
    b.restore(JSON.parse(JSON.stringify(a.persist())) as PersistedNotifier);
    expect(kinds(b.tick(utc(2026, 1, 7, 5)).messages)).toEqual(["digest", "digest", "digest"]);
  });

  it("refuses a stored state of another version, saying what it expected", () => {
    expect(() => makeNotifier().restore({ version: 2 } as unknown as PersistedNotifier)).toThrow(/expected an object with version 1, found 2/);
  });

  it("takeChanged reports a change once", () => {
    const n = makeNotifier();
    expect(n.takeChanged()).toBe(false);
    n.handle([tr("co-gradient-bf2", "raise", T0)], T0);
    expect(n.takeChanged()).toBe(true);
    expect(n.takeChanged()).toBe(false);
  });
});
