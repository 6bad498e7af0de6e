// Local time and the on-call rotation across daylight-saving changes.
//
// Source of the zone rules: the IANA tz database as shipped with Node's ICU (process.versions.tz,
// printed below). The changes checked here follow from its rules:
// - Europe/Berlin (EU rule, Directive 2000/84/EC): summer time from the last Sunday of March,
//   01:00 UTC, to the last Sunday of October, 01:00 UTC. In 2026: 29 March and 25 October.
// - America/New_York (US rule, Energy Policy Act of 2005): from the second Sunday of March,
//   02:00 local, to the first Sunday of November, 02:00 local. In 2026: 8 March and 1 November.
// - Australia/Sydney (New South Wales): summer time ends the first Sunday of April, 03:00 local,
//   and begins the first Sunday of October, 02:00 local. In 2026: 5 April and 4 October.
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { notificationsSchema } from "../../src/config/sections/notifications.js";
import { Roster } from "../../src/notify/roster.js";
import { formatLocal, localParts, offsetMs, parseSiteTime, wallMs, wallToUtc } from "../../src/notify/zone.js";
import { H, notificationsInput } from "./helpers.js";

const utc = (y: number, mo: number, d: number, h = 0, mi = 0, s = 0) => Date.UTC(y, mo - 1, d, h, mi, s);
const wall = utc;

it(`uses the tz database shipped with Node's ICU (tz ${process.versions.tz}, ICU ${process.versions.icu})`, () => {
  expect(process.versions.tz).toMatch(/^20\d\d[a-z]$/);
});

describe("offsets and wall times (IANA tz database via Intl.DateTimeFormat)", () => {
  it("Europe/Berlin changes at 01:00 UTC on the last Sundays of March and October 2026", () => {
    expect(offsetMs("Europe/Berlin", utc(2026, 3, 29, 0, 59, 59))).toBe(1 * H);
    expect(offsetMs("Europe/Berlin", utc(2026, 3, 29, 1))).toBe(2 * H);
    expect(offsetMs("Europe/Berlin", utc(2026, 10, 25, 0, 59, 59))).toBe(2 * H);
    expect(offsetMs("Europe/Berlin", utc(2026, 10, 25, 1))).toBe(1 * H);
  });

  it("a local time that does not exist (spring gap) reads as after the gap; one that occurs twice gives the earlier", () => {
    // 02:30 on 29 March does not exist in Berlin: 03:30 CEST = 01:30 UTC.
    expect(wallToUtc("Europe/Berlin", wall(2026, 3, 29, 2, 30))).toBe(utc(2026, 3, 29, 1, 30));
    // 02:30 on 25 October occurs at 00:30 UTC (CEST) and 01:30 UTC (CET): the earlier.
    expect(wallToUtc("Europe/Berlin", wall(2026, 10, 25, 2, 30))).toBe(utc(2026, 10, 25, 0, 30));
    expect(wallToUtc("Europe/Berlin", wall(2026, 1, 6, 12))).toBe(utc(2026, 1, 6, 11));
    // New York: 02:30 on 8 March does not exist (03:30 EDT = 07:30 UTC); 01:30 on 1 November occurs twice (05:30 and 06:30 UTC).
    expect(wallToUtc("America/New_York", wall(2026, 3, 8, 2, 30))).toBe(utc(2026, 3, 8, 7, 30));
    expect(wallToUtc("America/New_York", wall(2026, 11, 1, 1, 30))).toBe(utc(2026, 11, 1, 5, 30));
    // Sydney, southern hemisphere: 02:30 on 5 April occurs twice (AEDT +11 first); 02:30 on 4 October does not exist.
    expect(wallToUtc("Australia/Sydney", wall(2026, 4, 5, 2, 30))).toBe(utc(2026, 4, 4, 15, 30));
    expect(wallToUtc("Australia/Sydney", wall(2026, 10, 4, 2, 30))).toBe(utc(2026, 10, 3, 16, 30));
  });

  it("wallToUtc inverts wallMs, giving the earlier instant when a wall time occurs twice (property, several zones)", () => {
    const zones = ["Europe/Berlin", "America/New_York", "Australia/Sydney", "Asia/Kolkata", "America/Santiago", "UTC"];
    fc.assert(
      fc.property(fc.constantFrom(...zones), fc.integer({ min: utc(2020, 1, 1) / 1000, max: utc(2030, 12, 31) / 1000 }), (zone, s) => {
        const t = s * 1000;
        const w = wallMs(zone, t);
        const back = wallToUtc(zone, w);
        expect(wallMs(zone, back)).toBe(w);
        expect(back).toBeLessThanOrEqual(t);
        // The earlier reading is at most one offset change (≤ 2 h here) before.
        expect(t - back).toBeLessThanOrEqual(2 * H);
      }),
      { numRuns: 3000 },
    );
  });

  it("5 January 2026 is a Monday (weekday 0), and local fields follow the zone", () => {
    expect(localParts("Europe/Berlin", utc(2026, 1, 5, 6))).toMatchObject({ year: 2026, month: 1, day: 5, hour: 7, weekday: 0 });
    expect(localParts("America/New_York", utc(2026, 1, 5, 3))).toMatchObject({ day: 4, hour: 22, weekday: 6 });
  });

  it("formats site time with the zone's short name", () => {
    expect(formatLocal("Europe/Berlin", utc(2026, 1, 6, 9))).toBe("2026-01-06 10:00:00 CET");
    expect(formatLocal("Europe/Berlin", utc(2026, 7, 6, 9))).toBe("2026-07-06 11:00:00 CEST");
  });

  it("parses config times: local to the site, or absolute with Z or an offset; refuses impossible dates", () => {
    expect(parseSiteTime("2026-01-07T07:00", "Europe/Berlin")).toBe(utc(2026, 1, 7, 6));
    expect(parseSiteTime("2026-01-07T07:00Z", "Europe/Berlin")).toBe(utc(2026, 1, 7, 7));
    expect(parseSiteTime("2026-01-07T07:00+05:30", "Europe/Berlin")).toBe(utc(2026, 1, 7, 1, 30));
    expect(() => parseSiteTime("2026-02-30T10:00", "Europe/Berlin")).toThrow(/not a valid date/);
    expect(() => parseSiteTime("7 Jan 2026", "Europe/Berlin")).toThrow(/expected "YYYY-MM-DDTHH:MM"/);
  });
});

function roster(startsAt: string, weeks: { primary: string; secondary?: string }[], overrides: unknown[] = [], zone = "Europe/Berlin"): Roster {
  const cfg = notificationsSchema.parse(
    notificationsInput({
      timeZone: zone,
      rosters: [{ id: "process", rotation: { startsAt, weeks }, supervisor: "mira", overrides }],
    }),
  );
  return new Roster(cfg.rosters[0]!, zone);
}

describe("weekly rotation in the site's time zone", () => {
  const AB = [{ primary: "anna", secondary: "jonas" }, { primary: "jonas", secondary: "anna" }];

  it("hands over at the local time of the start, seven local days apart", () => {
    const r = roster("2026-01-05T07:00", AB);
    expect(r.handoverMs(0)).toBe(utc(2026, 1, 5, 6));
    expect(r.handoverMs(1)).toBe(utc(2026, 1, 12, 6));
    expect(r.onCall(utc(2026, 1, 12, 5, 59, 59))).toEqual({ primary: "anna", secondary: "jonas", supervisor: "mira" });
    expect(r.onCall(utc(2026, 1, 12, 6))).toEqual({ primary: "jonas", secondary: "anna", supervisor: "mira" });
    // The list repeats, and runs backwards before the start.
    expect(r.onCall(utc(2026, 1, 19, 6)).primary).toBe("anna");
    expect(r.onCall(utc(2026, 1, 5, 5)).primary).toBe("jonas");
  });

  it("keeps a Monday 07:00 handover at 07:00 local across both changes: the weeks last 167 h and 169 h", () => {
    const spring = roster("2026-03-23T07:00", AB);
    expect(spring.handoverMs(0)).toBe(utc(2026, 3, 23, 6)); // 07:00 CET
    expect(spring.handoverMs(1)).toBe(utc(2026, 3, 30, 5)); // 07:00 CEST
    expect((spring.handoverMs(1) - spring.handoverMs(0)) / H).toBe(167);
    const autumn = roster("2026-10-19T07:00", AB);
    expect((autumn.handoverMs(1) - autumn.handoverMs(0)) / H).toBe(169);
    expect(autumn.handoverMs(1)).toBe(utc(2026, 10, 26, 6)); // 07:00 CET
  });

  it("a handover at a local time the spring change skips happens when the clocks have moved past it", () => {
    const r = roster("2026-03-22T02:30", AB);
    expect(r.handoverMs(1)).toBe(utc(2026, 3, 29, 1, 30)); // 03:30 CEST
    expect(r.onCall(utc(2026, 3, 29, 1, 29)).primary).toBe("anna");
    expect(r.onCall(utc(2026, 3, 29, 1, 30)).primary).toBe("jonas");
  });

  it("a handover at a local time the autumn change repeats happens once, at the first, and does not go back in the repeated hour", () => {
    const r = roster("2026-10-18T02:30", AB);
    expect(r.handoverMs(1)).toBe(utc(2026, 10, 25, 0, 30)); // the first 02:30 (CEST)
    expect(r.onCall(utc(2026, 10, 25, 0, 29)).primary).toBe("anna");
    expect(r.onCall(utc(2026, 10, 25, 0, 30)).primary).toBe("jonas");
    // 01:15 UTC is 02:15 CET: local time reads before 02:30 again, but the handover is past.
    expect(r.onCall(utc(2026, 10, 25, 1, 15)).primary).toBe("jonas");
    expect(r.onCall(utc(2026, 10, 25, 1, 45)).primary).toBe("jonas");
  });

  it("a stand-in holds the role from (inclusive) to (exclusive) in site time; the last listed wins", () => {
    const r = roster("2026-01-05T07:00", AB, [
      { from: "2026-01-07T07:00", to: "2026-01-08T07:00", role: "primary", person: "lena", reason: "swap" },
      { from: "2026-01-07T12:00", to: "2026-01-07T13:00", role: "primary", person: "mira", reason: "cover at lunch" },
      { from: "2026-01-07T07:00", to: "2026-01-08T07:00", role: "supervisor", person: "jonas", reason: "holiday" },
    ]);
    expect(r.onCall(utc(2026, 1, 7, 5, 59))).toEqual({ primary: "anna", secondary: "jonas", supervisor: "mira" });
    expect(r.onCall(utc(2026, 1, 7, 6))).toEqual({ primary: "lena", secondary: "jonas", supervisor: "jonas" });
    expect(r.onCall(utc(2026, 1, 7, 11, 30)).primary).toBe("mira");
    expect(r.onCall(utc(2026, 1, 8, 6)).primary).toBe("anna");
  });

  it("works in a zone of the southern hemisphere too (Sydney: 2026 summer time ends 5 April)", () => {
    const r = roster("2026-03-30T07:00", AB, [], "Australia/Sydney");
    expect(r.handoverMs(0)).toBe(utc(2026, 3, 29, 20)); // 07:00 AEDT (+11)
    expect(r.handoverMs(1)).toBe(utc(2026, 4, 5, 21)); // 07:00 AEST (+10)
  });
});
