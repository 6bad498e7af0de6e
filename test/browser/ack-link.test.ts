// Acknowledging from a notification, in a real browser (phone size), against the real daemon
// (data clock) fed by the simulator's filter-smoulder scenario: the link of an outbox entry is
// opened, the page shows the advisory, the on-call engineer types a user name and a PIN (set
// the way `millwarden user pin` does), and the advisory is acknowledged, with source "link" in
// the audit trail; the same link then refuses to work again.
import type { Browser } from "playwright-core";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { startEmbeddedBroker, type EmbeddedBroker } from "../../src/daemon/embedded-broker.js";
import type { Daemon } from "../../src/daemon/daemon.js";
import { hashPassword } from "../../src/server/passwords.js";
import { runSimulator } from "../../src/sim/publish.js";
import { demoConfigFor, startTestDaemon, tempDir, waitFor } from "../integration/helpers.js";
import { HAVE_CHROMIUM, PHONE, WALL, axeViolations, launchChromium, openPage, screenshot } from "./browser.js";

const START = Date.UTC(2026, 10, 30, 5, 0, 0);
const ADVISORY = "co-gradient-bf2";
const USER = "a.berg"; // the demo roster's person a.berg
// Test-only PIN and password; scrypt with reduced cost so the test does not spend seconds hashing.
const PIN = "735190";
const LOW_COST = { logN: 10, r: 8, p: 1 };

describe.skipIf(!HAVE_CHROMIUM)("browser: acknowledge an advisory from the link in a notification", () => {
  let broker: EmbeddedBroker;
  let daemon: Daemon;
  let dir: ReturnType<typeof tempDir>;
  let browser: Browser;
  let link: string;

  beforeAll(async () => {
    broker = await startEmbeddedBroker(0);
    dir = tempDir("mw-browser-ack-link-");
    const prefix = `mw-browser-ack-link/${process.pid}-${Math.random().toString(16).slice(2, 8)}`;
    ({ daemon } = await startTestDaemon(demoConfigFor(broker.url, prefix, dir.path)));
    const accounts = daemon.historian.accounts();
    accounts.addUser(USER, "operator", await hashPassword("tarnholm-line2-oncall", LOW_COST), Date.now());
    accounts.setPinHash(USER, await hashPassword(PIN, LOW_COST), Date.now());
    await runSimulator({ scenario: "filter-smoulder", mqttUrl: broker.url, topicPrefix: prefix, speed: 300, startTimeMs: START, seed: 11 });
    await waitFor(() => daemon.engine.currentAdvisories().some((a) => a.id === ADVISORY && (a.state === "unack" || a.state === "rtn-unack")), 20_000, "the bag filter CO gradient advisory, unacknowledged");
    const notify = daemon.notify!;
    await waitFor(() => notify.outbox.entries().some((e) => e.advisoryId === ADVISORY && notify.ackLinkOf(e) !== null), 10_000, "a notification about the advisory in the outbox");
    const entry = notify.outbox.entries().find((e) => e.advisoryId === ADVISORY && notify.ackLinkOf(e) !== null)!;
    // The link as sent, on the test daemon's own address (the demo's linkBase names another port).
    link = `${daemon.url}/ack.html${notify.ackLinkOf(entry)!.slice(notify.ackLinkOf(entry)!.indexOf("#"))}`;
    browser = await launchChromium();
  }, 90_000);

  afterAll(async () => {
    await browser?.close();
    await daemon?.stop();
    await broker?.close();
    dir?.remove();
  });

  it("opens the link, shows the advisory, takes the PIN and acknowledges; the link does not work twice", async () => {
    const { page, errors } = await openPage(browser, PHONE, link);
    await expect.poll(() => page.locator("#ack-form").isVisible(), { timeout: 10_000 }).toBe(true);
    expect(await page.locator("#ack-subject").innerText()).toMatch(/CO/);
    expect(await page.locator("#ack-state").innerText()).toMatch(/unacknowledged/);
    // The token left the address bar once read.
    expect(page.url()).not.toContain("#t=");
    expect(await axeViolations(page)).toEqual([]);
    await screenshot(page, "ack-link-390x844-form");

    await page.locator("#ack-user").fill(USER);
    await page.locator("#ack-secret").fill(PIN);
    await page.locator("#ack-submit").click();
    await expect.poll(() => page.locator("#ack-status").innerText(), { timeout: 10_000 }).toMatch(new RegExp(`Acknowledged by ${USER.replace(".", "\\.")}`));
    await screenshot(page, "ack-link-390x844-acknowledged");

    const view = daemon.engine.currentAdvisories().find((a) => a.id === ADVISORY);
    expect(view?.ackedBy).toBe(USER);
    const audit = daemon.historian.accounts().auditLog(50).find((e) => e.action === "advisory.ack" && e.source === "link");
    expect(audit).toMatchObject({ actor: USER, target: ADVISORY, detail: { outcome: "ok" } });
    expect(typeof audit?.detail["channel"]).toBe("string");
    expect(errors).toEqual([]);
    await page.context().close();

    // The same link again: the page says it was used, by whom.
    const again = await openPage(browser, PHONE, link);
    await expect.poll(() => again.page.locator("#ack-status").innerText(), { timeout: 10_000 }).toMatch(/used already, by a\.berg/);
    expect(await again.page.locator("#ack-form").isVisible()).toBe(false);
    await again.page.context().close();
  }, 60_000);

  it("the delivery log page lists the attempts for an engineer, and the glance screen names the failing channels", async () => {
    daemon.historian.accounts().addUser("m.holt", "engineer", await hashPassword("tarnholm-line2-engineer", LOW_COST), Date.now());
    const { page, errors } = await openPage(browser, WALL, `${daemon.url}/deliveries.html`);
    await expect.poll(() => page.locator("#deliveries-status").innerText(), { timeout: 10_000 }).toMatch(/Log in on the glance screen first/);
    // The session cookie of this browser context, as the glance screen's login form would set it.
    expect((await page.request.post(`${daemon.url}/api/login`, { data: { user: "m.holt", password: "tarnholm-line2-engineer" } })).status()).toBe(200);
    await page.reload();
    await expect.poll(() => page.locator("#deliveries-table").isVisible(), { timeout: 10_000 }).toBe(true);
    expect(await page.locator("#deliveries-rows tr").count()).toBeGreaterThan(0);
    // The demo's receivers are not running: the mail channel fails, and the page says so.
    expect(await page.locator("#deliveries-health").innerText()).toMatch(/notifications: mail failing since \S+/);
    expect(await axeViolations(page)).toEqual([]);
    await screenshot(page, "deliveries-1920x1080");
    await page.goto(daemon.url!);
    await expect.poll(() => page.locator("#notify-health").innerText(), { timeout: 10_000 }).toMatch(/^notifications: mail failing since \d\d:\d\d \u2014 /);
    expect(errors).toEqual([]);
    await page.context().close();
  }, 60_000);
});
