// The acknowledge page a notification links to: <linkBase>/ack.html#t=<token>.
//
//   fragment t ─GET /api/ack-link (X-Ack-Token)─▶ the advisory, the channel, the expiry (no side effect)
//   form {user, PIN or password} ─POST /api/ack-link {token, user, secret}─▶ acknowledged, or why not
//
// The token stays in the fragment (never sent in a URL, so never in a server's log) and in this
// page's memory; the fragment is cleared once read, so the address bar and the history lose it.
// No session is opened: the PIN or password is checked for this one acknowledgement.
const $ = (id) => document.getElementById(id);

const token = new URLSearchParams(location.hash.slice(1)).get("t") ?? "";
if (location.hash) history.replaceState(null, "", location.pathname);

function say(text) {
  $("ack-status").textContent = text;
}

function siteTime(ms) {
  return new Date(ms).toLocaleString(undefined, { dateStyle: "medium", timeStyle: "short" });
}

async function errorText(res) {
  try {
    const body = await res.json();
    return body.message ?? `the box answered ${res.status}`;
  } catch {
    return `the box answered ${res.status}`;
  }
}

const STATE_WORDS = { unack: "unacknowledged", ack: "acknowledged", "rtn-unack": "returned to normal, unacknowledged", latched: "latched (needs a reset)", shelved: "shelved", suppressed: "suppressed by design", "out-of-service": "out of service", normal: "normal" };
const stateText = (s) => STATE_WORDS[s] ?? s;

function show(info) {
  $("ack-subject").textContent = info.subject;
  const a = info.advisory;
  $("ack-tier").textContent = a ? a.tier : "—";
  $("ack-state").textContent = a ? stateText(a.state) : "no longer active";
  $("ack-value").textContent = a && a.value !== null && a.value !== undefined ? String(a.value) : "—";
  $("ack-channel").textContent = `${info.channelKind} (${info.channel})`;
  $("ack-expires").textContent = siteTime(info.expiresAtMs);
  $("ack-advisory").hidden = false;
  if (info.advisoryOnly) $("advisory-only").textContent = info.advisoryOnly;
}

async function load() {
  if (token === "") {
    say("This page needs the link from a notification; none was given.");
    return;
  }
  const res = await fetch("/api/ack-link", { headers: { "x-ack-token": token }, cache: "no-store" });
  if (!res.ok) {
    say(await errorText(res));
    return;
  }
  const info = await res.json();
  show(info);
  say("Give your user name and your PIN (or password) to acknowledge.");
  $("ack-form").hidden = false;
  $("ack-user").focus();
}

async function submit(event) {
  event.preventDefault();
  const user = $("ack-user").value.trim();
  const secret = $("ack-secret").value;
  $("ack-secret").value = "";
  $("ack-error").textContent = "";
  if (user === "" || secret === "") {
    $("ack-error").textContent = "Enter your user name and your PIN or password.";
    return;
  }
  $("ack-submit").disabled = true;
  try {
    const res = await fetch("/api/ack-link", { method: "POST", headers: { "content-type": "application/json" }, body: JSON.stringify({ token, user, secret }), cache: "no-store" });
    if (!res.ok) {
      const text = await errorText(res);
      // A used or expired link cannot work again: the form goes.
      if (res.status === 409 || res.status === 410 || res.status === 404) {
        $("ack-form").hidden = true;
        say(text);
      } else $("ack-error").textContent = text;
      return;
    }
    const body = await res.json();
    $("ack-form").hidden = true;
    if (body.acknowledged) {
      say(`Acknowledged by ${body.by}. The escalation has stopped.`);
      $("ack-state").textContent = body.advisory ? stateText(body.advisory.state) : "returned to normal";
    } else say(`Not acknowledged here: ${body.note} The escalation has stopped.`);
  } catch (err) {
    $("ack-error").textContent = `The box could not be reached (${err.message}); try again.`;
  } finally {
    $("ack-submit").disabled = false;
  }
}

$("ack-form").addEventListener("submit", submit);
load().catch((err) => say(`The box could not be reached (${err.message}).`));
