// The notifications: section: what it accepts, and the errors it gives with file:line.
import { describe, expect, it } from "vitest";
import { parseConfig } from "../../src/config/load.js";
import { lineOf, problemsOf, SITE_AND_SOURCE } from "./helpers.js";

const PLANT = `${SITE_AND_SOURCE}signals:
  - { id: a.temp, name: Gas temperature, tag: TT-1, source: m, topic: t/1, unit: degC, expectedPeriodS: 1 }
units:
  - { id: u1, name: Filter, kind: bag-filter }
`;

const SECTION = `notifications:
  timeZone: Europe/Berlin
  channels:
    - { id: mail, kind: email, host: 127.0.0.1, port: 2525, tls: none, from: millwarden@site.example }
    - { id: hook, kind: webhook, url: "http://127.0.0.1:8491/x", secretEnv: MW_HOOK_KEY }
  people:
    - { id: anna, name: Anna Berg, contacts: [{ channel: mail, address: anna@site.example }] }
  rosters:
    - { id: r, rotation: { startsAt: "2026-01-05T07:00", weeks: [{ primary: anna }] } }
  routes:
    - { tiers: [warning], roster: r, channels: [hook] }
`;

describe("notifications: config", () => {
  it("a minimal section parses, with the defaults filled in", () => {
    const n = parseConfig(PLANT + SECTION, "plant.yaml").notifications!;
    expect(n.escalation).toEqual({ tiers: ["warning"], afterS: 600 });
    expect(n.reminders).toEqual({ tiers: ["warning"], everyS: 1800, max: 8 });
    expect(n.delivery).toEqual({ maxAttempts: 10, backoffBaseS: 5, backoffMaxS: 900, giveUpAfterS: 86_400 });
    expect(n.channels[0]).toMatchObject({ kind: "email", tls: "none", rejectUnauthorized: true, timeoutS: 15 });
  });

  it("no section: no notifications", () => {
    expect(parseConfig(PLANT, "plant.yaml").notifications).toBeUndefined();
  });

  it("an unknown time zone is refused at its line, naming what is expected", () => {
    const text = PLANT + SECTION.replace("Europe/Berlin", "Europe/Tarnholm");
    const p = problemsOf(text);
    expect(p[0]).toMatchObject({ line: lineOf(text, "Europe/Tarnholm"), key: "notifications.timeZone" });
    expect(p[0]!.message).toMatch(/unknown time zone "Europe\/Tarnholm": expected an IANA zone name/);
  });

  it("references inside the section: an unknown person, channel or roster names what exists", () => {
    const text = PLANT + SECTION.replace("primary: anna", "primary: anja").replace("channels: [hook]", "channels: [hok]").replace("roster: r,", "roster: rr,");
    const p = problemsOf(text);
    expect(p.map((x) => x.key)).toEqual(["notifications.rosters[0].rotation.weeks[0].primary", "notifications.routes[0].roster", "notifications.routes[0].channels[0]"]);
    expect(p[0]!.message).toMatch(/unknown person "anja": expected one of the ids under notifications.people \(anna\)/);
    expect(p[2]!.message).toMatch(/unknown channel "hok".*\(mail, hook\)/);
  });

  it("a secret is never written in the file: a password key is refused, only its environment variable name", () => {
    const text = PLANT + SECTION.replace("secretEnv: MW_HOOK_KEY", "secret: abc123");
    const p = problemsOf(text);
    expect(p.some((x) => /unknown key "secret"/.test(x.message))).toBe(true);
    const bad = problemsOf(PLANT + SECTION.replace("secretEnv: MW_HOOK_KEY", 'secretEnv: "not a name"'));
    expect(bad[0]!.message).toMatch(/expected the name of an environment variable/);
  });

  it("an e-mail contact needs an address; a login needs both username and passwordEnv", () => {
    const text = PLANT + SECTION.replace("{ channel: mail, address: anna@site.example }", "{ channel: mail }").replace("tls: none,", "tls: none, username: mw,");
    const p = problemsOf(text);
    expect(p.map((x) => x.key).sort()).toEqual(["notifications.channels[0].passwordEnv", "notifications.people[0].contacts[0].address"]);
  });

  it("times: impossible dates and spans that end before they start are refused", () => {
    const text = `${PLANT}${SECTION}  maintenanceWindows:\n    - { from: "2026-02-02T18:00", to: "2026-02-02T06:00", reason: x }\n    - { from: "2026-02-30T06:00", to: "2026-03-01T06:00", reason: y }\n  quietHours:\n    - { from: "22:00", to: "25:00" }\n`;
    const p = problemsOf(text);
    const byKey = Object.fromEntries(p.map((x) => [x.key, x.message]));
    expect(byKey["notifications.maintenanceWindows[0].to"]).toMatch(/expected "to" after "from"/);
    expect(byKey["notifications.maintenanceWindows[1]"]).toMatch(/"2026-02-30T06:00" is not a valid date/);
    expect(byKey["notifications.quietHours[0].to"]).toMatch(/expected a local time "HH:MM"/);
  });

  it("a daily test on a person channel needs to whom; MQTT topics take no wildcards", () => {
    const text = PLANT + SECTION.replace("from: millwarden@site.example }", 'from: millwarden@site.example, dailyTest: { at: "07:30" } }') + "";
    expect(problemsOf(text)[0]!.message).toMatch(/a daily test on an e-mail channel needs to: \(the people who receive it\)/);
    const mqtt = PLANT + SECTION.replace("    - { id: hook,", "    - { id: b, kind: mqtt, url: mqtt://127.0.0.1:18831, topic: site/# }\n    - { id: hook,");
    expect(problemsOf(mqtt)[0]!.message).toMatch(/expected a topic without the wildcards/);
  });

  it("the loader's cross-check: units and positions must exist, and the notification topic is not a plant topic, each with file:line", () => {
    const text =
      PLANT +
      SECTION.replace("    - { tiers: [warning], roster: r, channels: [hook] }", "    - { tiers: [warning], units: [u9], positions: [desk], roster: r }").replace(
        "    - { id: hook,",
        "    - { id: b, kind: mqtt, url: mqtt://127.0.0.1:18831, topic: t/1 }\n    - { id: hook,",
      );
    const p = problemsOf(text);
    const byKey = Object.fromEntries(p.map((x) => [x.key, x]));
    expect(byKey["notifications.routes[0].units[0]"]).toMatchObject({ line: lineOf(text, "units: [u9]"), message: expect.stringMatching(/unknown unit "u9": expected one of u1/) });
    expect(byKey["notifications.routes[0].positions[0]"]!.message).toBe('no rule has position "desk": expected one of none');
    expect(byKey["notifications.channels[1].topic"]).toMatchObject({ line: lineOf(text, "topic: t/1 }"), message: 'topic "t/1" carries a plant signal: notifications go to a topic of their own' });
  });
});
