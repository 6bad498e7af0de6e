// The replay's small formats: times on the command line (RFC 3339) and events as JSON lines.
import { describe, expect, it } from "vitest";
import type { AdvisoryTransition, NuisanceEvent } from "../../src/core/types.js";
import { eventJsonLine, isWrittenEvent } from "../../src/replay/jsonl.js";
import { parseTimeArg } from "../../src/replay/time.js";
import { duration, table } from "../../src/replay/render.js";

describe("parseTimeArg (RFC 3339 §5.6 date-time)", () => {
  it("reads Z and numeric offsets: local time minus the offset is UTC (RFC 3339 §4.2)", () => {
    expect(parseTimeArg("2026-01-12T06:00:00Z")).toBe(Date.UTC(2026, 0, 12, 6));
    expect(parseTimeArg("2026-01-12T07:30:00+01:30")).toBe(Date.UTC(2026, 0, 12, 6));
    expect(parseTimeArg("2026-01-12T01:00:00-05:00")).toBe(Date.UTC(2026, 0, 12, 6));
    expect(parseTimeArg("2026-01-12t06:00:00.123456z")).toBe(Date.UTC(2026, 0, 12, 6, 0, 0, 123));
    expect(parseTimeArg("1768197600000")).toBe(Date.UTC(2026, 0, 12, 6));
    // leap day of a year divisible by 400 (Gregorian calendar rule)
    expect(parseTimeArg("2000-02-29T00:00:00Z")).toBe(Date.UTC(2000, 1, 29));
    // years below 100 are not shifted into the 1900s (value from Python's datetime, proleptic Gregorian)
    expect(parseTimeArg("0050-01-01T00:00:00Z")).toBe(-60_589_296_000_000);
  });

  it("says what is wrong with a time it refuses", () => {
    expect(parseTimeArg("2026-01-12")).toEqual({ error: expect.stringMatching(/^an RFC 3339 time with Z or an offset/) });
    expect(parseTimeArg("2026-01-12T06:00:00")).toEqual({ error: expect.stringMatching(/RFC 3339/) }); // no offset: ambiguous
    expect(parseTimeArg("1900-02-29T00:00:00Z")).toEqual({ error: expect.stringMatching(/the day must be 01-28 in 1900-02/) });
    expect(parseTimeArg("2026-13-01T00:00:00Z")).toEqual({ error: expect.stringMatching(/the month must be 01-12/) });
    expect(parseTimeArg("2026-01-12T24:00:00Z")).toEqual({ error: expect.stringMatching(/hour 00-23/) });
    expect(parseTimeArg("2026-01-12T06:00:00+24:00")).toEqual({ error: expect.stringMatching(/offset must be/) });
  });
});

describe("eventJsonLine", () => {
  const t: AdvisoryTransition = {
    kind: "advisory",
    atMs: 1,
    advisoryId: "a",
    ruleId: "a",
    transition: "raise",
    from: "normal",
    to: "unack",
    tier: "notice",
    value: null,
    limit: 2,
    by: "millwarden",
    why: "w",
  };

  it("writes the keys in the type's order whatever order the object was built in", () => {
    const shuffled = Object.fromEntries(Object.entries(t).reverse()) as unknown as AdvisoryTransition;
    expect(eventJsonLine(shuffled)).toBe(eventJsonLine(t));
    expect(eventJsonLine(t)).toBe('{"kind":"advisory","atMs":1,"advisoryId":"a","ruleId":"a","transition":"raise","from":"normal","to":"unack","tier":"notice","value":null,"limit":2,"by":"millwarden","why":"w"}');
  });

  it("writes a NaN limit as null and puts keys it does not know last, sorted", () => {
    const extra = { ...t, limit: Number.NaN, zeta: 1, alpha: 2 } as AdvisoryTransition;
    expect(eventJsonLine(extra)).toMatch(/"limit":null,"by":"millwarden","why":"w","alpha":2,"zeta":1\}$/);
    const n: NuisanceEvent = { why: "x", count: 11, advisoryId: null, position: "control-room", type: "flood-start", atMs: 5, kind: "nuisance" };
    expect(eventJsonLine(n)).toBe('{"kind":"nuisance","atMs":5,"type":"flood-start","position":"control-room","advisoryId":null,"count":11,"why":"x"}');
    expect([isWrittenEvent(t), isWrittenEvent(n), isWrittenEvent({ kind: "state" }), isWrittenEvent({ kind: "derived" })]).toEqual([true, true, false, false]);
  });
});

describe("text tables", () => {
  it("pads columns to the widest cell and aligns numbers right", () => {
    expect(table(["a", "n"], [["xyz", "1"], ["b", "100"]], ["l", "r"])).toBe("a      n\nxyz    1\nb    100");
    expect(duration(4_760_000)).toBe("1:19:20");
  });
});
