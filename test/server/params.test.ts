import { describe, expect, it } from "vitest";
import { ApiError } from "../../src/server/errors.js";
import {
  ACK_NOTE_MAX_CHARS,
  ADVISORY_COMMANDS,
  AUDIT_LIMIT_MAX,
  REASON_MAX_CHARS,
  parseAdvisoryLimit,
  parseAuditQuery,
  parseCommandBody,
  parseCommandName,
  parseTimeMs,
  parseTrendQuery,
} from "../../src/server/params.js";

/** Run fn, expect an ApiError, return it for checks on its code and text. */
function apiError(fn: () => unknown): ApiError {
  try {
    fn();
  } catch (err) {
    expect(err).toBeInstanceOf(ApiError);
    return err as ApiError;
  }
  throw new Error("expected an ApiError, nothing was thrown");
}

describe("parseTimeMs: RFC 3339 date-times and epoch milliseconds", () => {
  // The examples of RFC 3339 section 5.8, each with the instant the RFC says it denotes.
  it.each([
    ["1985-04-12T23:20:50.52Z", Date.UTC(1985, 3, 12, 23, 20, 50, 520)],
    // "-08:00 ... equivalent to 1996-12-20T00:39:57Z in UTC" (RFC 3339 5.8)
    ["1996-12-19T16:39:57-08:00", Date.UTC(1996, 11, 20, 0, 39, 57)],
    // Leap second "1990-12-31T23:59:60Z": epoch time has none, so it lands on the next second.
    ["1990-12-31T23:59:60Z", Date.UTC(1991, 0, 1, 0, 0, 0)],
    // Same leap second written in Pacific time (RFC 3339 5.8).
    ["1990-12-31T15:59:60-08:00", Date.UTC(1991, 0, 1, 0, 0, 0)],
  ])("%s", (text, expected) => {
    expect(parseTimeMs("from", text)).toBe(expected);
  });

  it("accepts lower-case t/z and a space separator (RFC 3339 5.6 NOTE)", () => {
    expect(parseTimeMs("from", "2024-05-01t06:00:00z")).toBe(Date.UTC(2024, 4, 1, 6));
    expect(parseTimeMs("from", "2024-05-01 06:00:00Z")).toBe(Date.UTC(2024, 4, 1, 6));
  });

  it("takes integers as epoch milliseconds", () => {
    expect(parseTimeMs("to", "1731562930000")).toBe(Date.UTC(2024, 10, 14, 5, 42, 10));
    expect(parseTimeMs("to", "0")).toBe(0);
  });

  // Gregorian leap years (RFC 3339 Appendix C): divisible by 4, except centuries not divisible by 400.
  it.each([
    ["2024-02-29T00:00:00Z", true],
    ["2000-02-29T00:00:00Z", true],
    ["2023-02-29T00:00:00Z", false],
    ["2100-02-29T00:00:00Z", false],
    ["2024-04-31T00:00:00Z", false],
    ["2024-02-30T00:00:00Z", false],
  ])("calendar check %s valid=%s", (text, valid) => {
    if (valid) expect(Number.isFinite(parseTimeMs("from", text))).toBe(true);
    else expect(apiError(() => parseTimeMs("from", text)).message).toMatch(/day \d+ of month \d+/);
  });

  it.each([
    ["2024-13-01T00:00:00Z", /month 13/],
    ["2024-01-01T24:00:00Z", /hour 24/],
    ["2024-01-01T10:60:00Z", /minute 60/],
    ["2024-01-01T10:00:00+24:00", /offset \+24:00/],
    ["1969-12-31T23:59:59Z", /before 1970/],
    ["2024-01-01", /RFC 3339/],
    ["2024-01-01T10:00:00", /RFC 3339/],
    ["yesterday", /RFC 3339/],
    ["-5", /RFC 3339/],
    ["1.5e12", /RFC 3339/],
    ["99999999999999999", /RFC 3339/],
  ])("refuses %s, naming the parameter and what was found", (text, why) => {
    const err = apiError(() => parseTimeMs("from", text));
    expect(err.code).toBe("BAD_QUERY");
    expect(err.message).toContain('query parameter "from"');
    expect(err.message).toMatch(why);
    expect(err.message).toContain(text.slice(0, 10));
  });
});

describe("parseTrendQuery", () => {
  const now = Date.UTC(2024, 10, 14, 5, 42, 10);
  const HOUR = 3_600_000;

  // Defaults from the API contract (brief for GET /api/trend): the last hour before now.
  it("defaults to the hour before the daemon's now", () => {
    expect(parseTrendQuery({ signal: "vm2-co" }, () => now)).toEqual({ signal: "vm2-co", fromMs: now - HOUR, toMs: now, points: 1000 });
  });

  it("takes a number of points from 3 to 10,000", () => {
    expect(parseTrendQuery({ signal: "x", points: "250" }, () => now).points).toBe(250);
    for (const bad of ["2", "10001", "1.5", "many", "-4"]) {
      expect(() => parseTrendQuery({ signal: "x", points: bad }, () => now)).toThrow(/"points": expected a whole number from 3 to 10000/);
    }
  });

  it("asks for now only when 'to' is missing", () => {
    let asked = 0;
    const clock = () => {
      asked += 1;
      return now;
    };
    parseTrendQuery({ signal: "x", from: String(now - 10 * HOUR), to: String(now - 9 * HOUR) }, clock);
    expect(asked).toBe(0);
    const q = parseTrendQuery({ signal: "x", from: String(now - 3 * HOUR) }, clock);
    expect(asked).toBe(1);
    expect(q).toEqual({ signal: "x", fromMs: now - 3 * HOUR, toMs: now, points: 1000 });
  });

  it("with only 'to', starts one hour before it", () => {
    const q = parseTrendQuery({ signal: "x", to: "2024-11-14T04:00:00Z" }, () => now);
    expect(q.toMs).toBe(Date.UTC(2024, 10, 14, 4));
    expect(q.fromMs).toBe(Date.UTC(2024, 10, 14, 3));
  });

  it("allows exactly 31 days and refuses one millisecond more", () => {
    const span = 31 * 24 * HOUR;
    expect(parseTrendQuery({ signal: "x", from: String(now - span), to: String(now) }, () => now).fromMs).toBe(now - span);
    const err = apiError(() => parseTrendQuery({ signal: "x", from: String(now - span - 1), to: String(now) }, () => now));
    expect(err.message).toMatch(/at most 31 days, found 31\.0 days/);
  });

  it("refuses from equal to or after to", () => {
    for (const from of [now, now + 1]) {
      const err = apiError(() => parseTrendQuery({ signal: "x", from: String(from), to: String(now) }, () => now));
      expect(err.message).toContain("expected from earlier than to");
      expect(err.message).toContain(new Date(now).toISOString());
    }
  });

  it("requires a signal and refuses repeated or unknown parameters", () => {
    expect(apiError(() => parseTrendQuery({}, () => now)).message).toContain('"signal"');
    expect(apiError(() => parseTrendQuery({ signal: " " }, () => now)).message).toContain('"signal"');
    expect(apiError(() => parseTrendQuery({ signal: ["a", "b"] }, () => now)).message).toContain("found it 2 times");
    expect(apiError(() => parseTrendQuery({ signal: "a", form: "1" }, () => now)).message).toContain('found "form"');
  });
});

describe("parseAdvisoryLimit", () => {
  it("defaults to 100 and accepts 1..1000", () => {
    expect(parseAdvisoryLimit(undefined)).toBe(100);
    expect(parseAdvisoryLimit("1")).toBe(1);
    expect(parseAdvisoryLimit("1000")).toBe(1000);
  });

  it.each(["0", "1001", "-1", "1.5", "ten", "", " 5", "1e3"])("refuses %j", (text) => {
    const err = apiError(() => parseAdvisoryLimit(text));
    expect(err.message).toBe(`query parameter "limit": expected an integer from 1 to 1000, found "${text}"`);
  });
});

describe("parseCommandBody: ack", () => {
  it("trims the note and drops an empty one", () => {
    expect(parseCommandBody("ack", { note: " checked hopper " })).toEqual({ note: "checked hopper" });
    expect(parseCommandBody("ack", { note: "   " })).toEqual({});
    expect(parseCommandBody("ack", {})).toEqual({});
  });

  // Lengths are counted in characters (code points): 500 two-unit characters are 500, not 1000.
  it("counts characters, not UTF-16 units", () => {
    const wide = "\u{1D49C}"; // one character, two UTF-16 code units
    expect(parseCommandBody("ack", { note: wide.repeat(ACK_NOTE_MAX_CHARS) }).note).toHaveLength(2 * ACK_NOTE_MAX_CHARS);
    expect(apiError(() => parseCommandBody("ack", { note: wide.repeat(ACK_NOTE_MAX_CHARS + 1) })).message).toContain("found 501");
  });

  it.each([
    [null, /expected a JSON object .* found null/],
    [[1, 2], /found an array of 2/],
    ["A. Operator", /found "A. Operator"/],
    [{ note: 7 }, /field "note": expected a string .* found number 7/],
    [{ note: "n".repeat(ACK_NOTE_MAX_CHARS + 1) }, /field "note": expected at most 500 characters, found 501/],
    [{ notes: "typo" }, /expected only the field "note", found "notes"/],
    // Who and in what role come from the login session, never from the body.
    [{ by: "A. Operator" }, /field "by": not accepted; who gives a command and in what role come from the login session/],
    [{ role: "engineer", note: "x" }, /field "role": not accepted/],
  ])("refuses %j", (body, why) => {
    const err = apiError(() => parseCommandBody("ack", body));
    expect(err.code).toBe("BAD_BODY");
    expect(err.message).toMatch(why);
  });
});

describe("parseAuditQuery", () => {
  it("defaults to 100 and accepts up to the maximum", () => {
    expect(parseAuditQuery({})).toEqual({ limit: 100 });
    expect(parseAuditQuery({ limit: String(AUDIT_LIMIT_MAX) })).toEqual({ limit: AUDIT_LIMIT_MAX });
  });

  it.each(["0", "1001", "x"])("refuses limit=%s", (limit) => {
    expect(apiError(() => parseAuditQuery({ limit })).message).toBe(`query parameter "limit": expected an integer from 1 to 1000, found "${limit}"`);
  });
});

describe("parseCommandName", () => {
  // The six commands of the advisory lifecycle (src/core/types.ts Command), in the API's order.
  it("knows the six commands", () => {
    expect(ADVISORY_COMMANDS).toEqual(["ack", "reset", "shelve", "unshelve", "out-of-service", "return-to-service"]);
    for (const c of ADVISORY_COMMANDS) expect(parseCommandName(c)).toBe(c);
  });

  it.each(["", "Ack", "acknowledge", "suppress", "__proto__", "toString", undefined])("refuses %j with a 404 naming the six", (raw) => {
    const err = apiError(() => parseCommandName(raw));
    expect(err.code).toBe("UNKNOWN_COMMAND");
    expect(err.statusCode).toBe(404);
    expect(err.message).toContain("expected one of the commands ack, reset, shelve, unshelve, out-of-service, return-to-service");
  });
});

describe("parseCommandBody", () => {
  it("keeps what each command takes, trimmed, and nothing else", () => {
    expect(parseCommandBody("reset", { note: " done " })).toEqual({ note: "done" });
    expect(parseCommandBody("shelve", { reason: " purge ", durationS: 900 })).toEqual({ reason: "purge", durationS: 900 });
    expect(parseCommandBody("shelve", { reason: "purge", oneShot: true })).toEqual({ reason: "purge", oneShot: true });
    // A one-shot may carry its own bound; the daemon caps it at the site's maximum.
    expect(parseCommandBody("shelve", { reason: "purge", oneShot: true, durationS: 600 })).toEqual({ reason: "purge", oneShot: true, durationS: 600 });
    expect(parseCommandBody("unshelve", {})).toEqual({});
    expect(parseCommandBody("unshelve", { reason: "" })).toEqual({});
    expect(parseCommandBody("out-of-service", { reason: "r" })).toEqual({ reason: "r" });
    expect(parseCommandBody("return-to-service", {})).toEqual({});
  });

  it("counts a reason in characters and allows exactly the maximum", () => {
    const wide = "\u{1D49C}";
    expect(parseCommandBody("shelve", { reason: wide.repeat(REASON_MAX_CHARS), oneShot: true }).reason).toHaveLength(2 * REASON_MAX_CHARS);
    expect(apiError(() => parseCommandBody("shelve", { reason: wide.repeat(REASON_MAX_CHARS + 1), oneShot: true })).message).toBe(
      `request body field "reason": expected at most ${REASON_MAX_CHARS} characters, found ${REASON_MAX_CHARS + 1}`,
    );
  });

  it.each([
    ["shelve", { reason: "r", durationS: Number.MAX_SAFE_INTEGER + 2 }, /"durationS": expected a whole number of seconds/],
    ["shelve", { reason: "r", durationS: -60 }, /found number -60/],
    ["shelve", { reason: "r\u0007", oneShot: true }, /found a control character/],
    ["out-of-service", { reason: "" }, /"reason": expected why the advisory is taken out of service \(1 to 500 characters\), found an empty string/],
    ["out-of-service", { reason: "r", role: "engineer" }, /field "role": not accepted; .* from the login session \(POST \/api\/login\), expected only "reason"/],
    ["unshelve", "A", /request body for unshelve: expected a JSON object such as \{"reason": "..."\}, found "A"/],
  ] as const)("refuses %s %j", (kind, body, why) => {
    const err = apiError(() => parseCommandBody(kind, body));
    expect(err.code).toBe("BAD_BODY");
    expect(err.message).toMatch(why);
  });
});
