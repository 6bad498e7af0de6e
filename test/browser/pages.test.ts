// The engineer's pages in a real browser against the real demo pieces (embedded broker,
// simulator's filter-smoulder scenario, daemon on the data clock): the unit detail page, the
// advisory list and history (with a command from it), the shift handover (and its print
// layout), the audit trail (refused, then shown to an engineer), and the trends page drawing a
// rule's limits before its advisory was ever raised (GET /api/rules). Each page: no script
// errors, axe-core (WCAG 2 A/AA) without violations, screenshots at 1920×1080 and phone size.
import { mkdirSync } from "node:fs";
import { join } from "node:path";
import type { Browser, Page } from "playwright-core";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import type { Daemon } from "../../src/daemon/daemon.js";
import { waitFor } from "../integration/helpers.js";
import { HAVE_CHROMIUM, PHONE, SCREENSHOT_DIR, SmoulderedDemo, WALL, axeViolations, openPage, screenshot } from "./browser.js";

const ENGINEER = "k.engineer";
const OPERATOR = "t.operator";
// Test-only password (SmoulderedDemo hashes it with a reduced scrypt cost).
const PASSWORD = "tarnholm-line2-dayshift";

async function rendered(page: Page): Promise<void> {
  await expect.poll(() => page.evaluate(() => document.body.dataset.rendered), { timeout: 15_000 }).toBe("true");
}

async function logIn(page: Page, user: string): Promise<void> {
  await page.locator("#session-button").click();
  await page.locator("#login-user").fill(user);
  await page.locator("#login-password").fill(PASSWORD);
  await page.locator("#login-submit").click();
  await expect.poll(() => page.locator("#session-who").innerText(), { timeout: 10_000 }).toContain(user);
}

describe.skipIf(!HAVE_CHROMIUM)("browser: unit detail, advisories, handover, audit trail", () => {
  const demo = new SmoulderedDemo("pages");
  let daemon: Daemon;
  let browser: Browser;

  beforeAll(async () => {
    await demo.start([
      { user: ENGINEER, role: "engineer", password: PASSWORD },
      { user: OPERATOR, role: "operator", password: PASSWORD },
    ]);
    ({ daemon, browser } = demo);
  }, 90_000);

  afterAll(() => demo.close());

  it("the glance screen links each unit to its detail page, which shows O2, limits, analysers, dew point and CO", async () => {
    const { page, errors } = await openPage(browser, WALL, daemon.url!);
    const link = page.locator('a.unit-link[href="unit.html?unit=bf2"]');
    await expect.poll(() => link.isVisible(), { timeout: 15_000 }).toBe(true);
    await link.click();
    await rendered(page);
    expect(page.url()).toMatch(/unit\.html\?unit=bf2$/);
    const text = await page.locator("#main").innerText();
    // config/demo.yaml: BF2 O2 against the LOC-based limit 13 % dry; its analyser bf2-a213; the bag filter outlet dew point and CO.
    expect(text).toMatch(/13\.0 % dry/);
    expect(text).toContain("loc (governing)");
    expect(text).toContain("bf2-a213");
    expect(text).toContain("Bag filter outlet");
    expect(text).toMatch(/IAPWS-IF97/);
    expect(text).toContain("bf2.outlet.co");
    expect(await axeViolations(page)).toEqual([]);
    await screenshot(page, "unit-bf2-1920x1080", true);
    // The mill has purge tracking configured.
    await page.goto(`${daemon.url}/unit.html?unit=vm2`);
    await rendered(page);
    expect(await page.locator("#main").innerText()).toMatch(/Purge progress[\s\S]*volume changes/);
    expect(errors).toEqual([]);
    await page.context().close();

    const phone = await openPage(browser, PHONE, `${daemon.url}/unit.html?unit=vm2`);
    await rendered(phone.page);
    expect(await axeViolations(phone.page)).toEqual([]);
    await screenshot(phone.page, "unit-vm2-phone");
    expect(phone.errors).toEqual([]);
    await phone.page.context().close();
  }, 60_000);

  it("the advisory page shows the full details, filters the history, and acknowledges as the logged-in operator", async () => {
    const { page, errors } = await openPage(browser, WALL, `${daemon.url}/advisories.html`);
    await rendered(page);
    const card = page.locator('li.advisory-card[data-advisory-id="co-gradient-bf2"]');
    const text = await card.innerText();
    // The rule's texts and both tiers' limits from config/demo.yaml.
    expect(text).toContain("smouldering deposit in the filter");
    expect(text).toMatch(/caution 5\.0 ppm\/min, warning 15\.0 ppm\/min/);
    expect(text).toMatch(/common practice/);
    expect(await axeViolations(page)).toEqual([]);
    await screenshot(page, "advisories-1920x1080", true);

    await page.locator("#f-rule").selectOption("co-gradient-bf2");
    await expect.poll(() => page.url(), { timeout: 5_000 }).toMatch(/rule=co-gradient-bf2/);
    await rendered(page);
    const rules = await page.locator("#h-history ~ .table-wrap tbody tr td:nth-child(2)").allInnerTexts();
    expect(rules.length).toBeGreaterThan(0);
    expect(new Set(rules)).toEqual(new Set(["co-gradient-bf2"]));

    await logIn(page, OPERATOR);
    await card.getByRole("button", { name: /^Acknowledge/ }).click();
    await card.locator("form.cmd-form").getByRole("button", { name: "Acknowledge" }).click();
    await expect.poll(() => card.innerText(), { timeout: 10_000 }).toContain(`acknowledged by ${OPERATOR}`);
    // An operator is not offered out of service (the engineer's).
    expect(await card.getByRole("button", { name: /^Out of service/ }).count()).toBe(0);
    expect(errors).toEqual([]);
    await page.context().close();

    const phone = await openPage(browser, PHONE, `${daemon.url}/advisories.html`);
    await rendered(phone.page);
    expect(await axeViolations(phone.page)).toEqual([]);
    await screenshot(phone.page, "advisories-phone");
    expect(phone.errors).toEqual([]);
    await phone.page.context().close();
  }, 60_000);

  it("the handover lists the advisories with their handling and the time in state, for 8 or 12 hours, and prints without navigation", async () => {
    // After the acknowledgement of the test before (vitest runs a file's tests in order).
    await waitFor(() => daemon.historian.transitions({ advisoryId: "co-gradient-bf2" }).some((t) => t.transition === "ack"), 10_000, "the acknowledgement stored");
    const { page, errors } = await openPage(browser, WALL, `${daemon.url}/handover.html?hours=12`);
    await rendered(page);
    expect(await page.locator("#h-span").innerText()).toContain("last 12 h");
    const adv = await page.locator('section[aria-labelledby="h-adv"]').innerText();
    expect(adv).toContain("co-gradient-bf2");
    expect(adv).toContain(`acknowledged by ${OPERATOR}`);
    const states = await page.locator('section[aria-labelledby="h-states"]').innerText();
    expect(states).toMatch(/vm2\s+grinding/);
    expect(await axeViolations(page)).toEqual([]);
    await screenshot(page, "handover-1920x1080", true);
    await page.getByRole("button", { name: "last 8 h" }).click();
    await expect.poll(() => page.locator("#h-span").innerText(), { timeout: 5_000 }).toContain("last 8 h");

    await page.emulateMedia({ media: "print" });
    expect(await page.locator("nav.nav").isVisible()).toBe(false);
    expect(await page.locator("#session").isVisible()).toBe(false);
    expect(await page.locator("body").evaluate((b) => getComputedStyle(b).backgroundColor)).toBe("rgb(255, 255, 255)");
    expect(await page.locator('section[aria-labelledby="h-adv"]').evaluate((s) => getComputedStyle(s).breakBefore)).toBe("page");
    await screenshot(page, "handover-print-1920x1080", true);
    mkdirSync(SCREENSHOT_DIR, { recursive: true });
    const pdf = await page.pdf({ path: join(SCREENSHOT_DIR, "handover.pdf"), format: "A4" });
    expect(pdf.subarray(0, 5).toString()).toBe("%PDF-");
    expect(errors).toEqual([]);
    await page.context().close();

    const phone = await openPage(browser, PHONE, `${daemon.url}/handover.html`);
    await rendered(phone.page);
    expect(await axeViolations(phone.page)).toEqual([]);
    await screenshot(phone.page, "handover-phone");
    expect(phone.errors).toEqual([]);
    await phone.page.context().close();
  }, 60_000);

  it("the audit trail says it needs the engineer role, then shows the entries to an engineer", async () => {
    const { page, errors } = await openPage(browser, WALL, `${daemon.url}/audit.html`);
    await rendered(page);
    expect(await page.locator("#main").innerText()).toContain("needs a login with the engineer or admin role");
    expect(await axeViolations(page)).toEqual([]);
    await logIn(page, ENGINEER);
    await expect.poll(() => page.locator("#main").innerText(), { timeout: 10_000 }).toContain("advisory.ack");
    const text = await page.locator("#main").innerText();
    expect(text).toContain(OPERATOR);
    expect(text).toContain("config.loaded");
    expect(await axeViolations(page)).toEqual([]);
    await screenshot(page, "audit-1920x1080");
    expect(errors).toEqual([]);
    await page.context().close();

    const phone = await openPage(browser, PHONE, `${daemon.url}/audit.html`);
    await rendered(phone.page);
    expect(await axeViolations(phone.page)).toEqual([]);
    await screenshot(phone.page, "audit-phone");
    expect(phone.errors).toEqual([]);
    await phone.page.context().close();
  }, 60_000);

  it("the trends page draws a rule's limits from GET /api/rules before its advisory was ever raised", async () => {
    // co-gradient-vm2 (caution 5, warning 15 ppm/min at the mill outlet) stays quiet in the filter smoulder.
    expect(daemon.historian.transitions({ advisoryId: "co-gradient-vm2" })).toEqual([]);
    const { page, errors } = await openPage(browser, WALL, `${daemon.url}/trends.html?range=1h&series=co.vm2-outlet.gradientPpmPerMin`);
    await expect.poll(() => page.evaluate(() => document.body.dataset.plotted), { timeout: 15_000 }).toBe("1");
    const legend = await page.locator(".pane .legend").innerText();
    expect(legend).toContain("caution above 5 ppm/min (co-gradient-vm2)");
    expect(legend).toContain("warning above 15 ppm/min (co-gradient-vm2)");
    expect(errors).toEqual([]);
    await page.context().close();
  }, 60_000);
});
