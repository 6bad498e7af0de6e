// The glance screen's login helpers (dashboard/session-model.js) against the server's own
// rules: the role each command needs (src/server/auth.ts COMMAND_ROLE) and the login body
// the server accepts (src/server/params.ts parseLoginBody).
import { describe, expect, it } from "vitest";
import { commandAccess, loginBody, loginErrorText, sessionText } from "../../dashboard/session-model.js";
import { COMMAND_ROLE, hasRole } from "../../src/server/auth.js";
import { parseLoginBody } from "../../src/server/params.js";
import { ACCOUNT_ROLES } from "../../src/store/accounts.js";

describe("commandAccess", () => {
  it("asks for a login when nobody is logged in", () => {
    expect(commandAccess(null, "ack")).toBe("login");
    expect(commandAccess({ user: null, role: null }, "shelve")).toBe("login");
  });

  it("allows exactly what the server allows, for every role and command on the screen", () => {
    for (const role of ACCOUNT_ROLES) {
      for (const kind of ["ack", "reset", "shelve", "unshelve"] as const) {
        expect(commandAccess({ user: "x", role }, kind), `${role} ${kind}`).toBe(hasRole(role, COMMAND_ROLE[kind]) ? "allowed" : "not-allowed");
      }
    }
    expect(commandAccess({ user: "v.viewer", role: "viewer" }, "ack")).toBe("not-allowed");
  });
});

describe("loginBody", () => {
  it("trims the name, never the password, and the server takes what it makes", () => {
    const made = loginBody(" a.operator ", " pass phrase ");
    expect(made.body).toEqual({ user: "a.operator", password: " pass phrase " });
    expect(parseLoginBody(made.body)).toEqual(made.body);
  });

  it.each([
    ["", "x", /user name is needed/],
    ["a", "", /password is needed/],
    ["x".repeat(65), "x", /longer than 64/],
  ])("%j / %j says what is missing", (user, password, why) => {
    expect(loginBody(user, password).error).toMatch(why);
  });
});

describe("wording", () => {
  it("shows who is logged in", () => {
    expect(sessionText({ user: "a.operator", role: "operator" })).toBe("a.operator \u00b7 operator");
    expect(sessionText(null)).toBe("not logged in");
  });

  it("says why a login was refused, with the wait from Retry-After", () => {
    expect(loginErrorText(401, null)).toBe("The user name or the password was not accepted.");
    expect(loginErrorText(429, null, "900")).toBe("Too many failed logins for this name or from this screen: try again in 15 min.");
    expect(loginErrorText(429, null, "45")).toMatch(/try again in 45 s/);
    expect(loginErrorText(503, null)).toMatch(/checking other logins/);
    expect(loginErrorText(400, { message: 'request body field "user": expected ...' })).toBe('Not logged in: request body field "user": expected ...');
  });
});
