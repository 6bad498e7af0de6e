// Pure helpers for the login and the session on the glance screen (no DOM, no fetch), so
// that the tests can check them against the server's own rules (src/server/auth.ts).

/** Roles in order; each may do what the ones before it may. */
const RANK = { viewer: 0, operator: 1, engineer: 2, admin: 3 };

/** The least role the commands on this screen need (out of service is the engineer's, elsewhere). */
const COMMAND_ROLE = { ack: "operator", reset: "operator", shelve: "operator", unshelve: "operator" };

/**
 * Whether this session may give `kind`: "login" (nobody is logged in: the button asks for a
 * login), "allowed", or "not-allowed" (the button is not shown).
 */
export function commandAccess(session, kind) {
  if (!session || !session.user) return "login";
  const needed = COMMAND_ROLE[kind] ?? "engineer";
  return (RANK[session.role] ?? -1) >= RANK[needed] ? "allowed" : "not-allowed";
}

/** "a.operator · operator", or "not logged in". */
export function sessionText(session) {
  if (!session || !session.user) return "not logged in";
  return `${session.user} \u00b7 ${session.role}`;
}

/** The body of POST /api/login from what was typed, or what is missing. The password is never trimmed. */
export function loginBody(user, password) {
  const name = String(user ?? "").trim();
  if (name === "") return { error: "Your user name is needed." };
  if (name.length > 64) return { error: "The user name is longer than 64 characters." };
  const pw = String(password ?? "");
  if (pw === "") return { error: "Your password is needed." };
  return { body: { user: name, password: pw } };
}

/** What a refused login says, from the answer's status and body (never the password). */
export function loginErrorText(status, body, retryAfterS) {
  if (status === 401) return "The user name or the password was not accepted.";
  if (status === 429) {
    const s = Number(retryAfterS);
    const wait = Number.isFinite(s) && s > 0 ? (s >= 120 ? `${Math.ceil(s / 60)} min` : `${Math.ceil(s)} s`) : "a while";
    return `Too many failed logins for this name or from this screen: try again in ${wait}.`;
  }
  if (status === 503) return "The daemon is checking other logins: try again in a second.";
  return `Not logged in: ${body?.message ?? `the daemon answered HTTP ${status}`}`;
}
