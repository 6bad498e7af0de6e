// Logging in on the glance screen and acknowledging an advisory, in a real browser, against the
// real daemon (data clock) fed by the simulator's filter-smoulder scenario through the embedded
// broker. The account is created the way `millwarden user add` does (the historian's account
// store, with a scrypt hash); the browser then goes through the screen's own login form, and the
// command travels with the session cookie and its CSRF token (src/server/auth.ts).
import type { Browser } from "playwright-core";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import type { AdvisoryTransition, AdvisoryView } from "../../src/core/types.js";
import type { Daemon } from "../../src/daemon/daemon.js";
import { HAVE_CHROMIUM, SmoulderedDemo, WALL, axeViolations, openPage, screenshot } from "./browser.js";

const USER = "t.operator";
// Test-only password (SmoulderedDemo hashes it with a reduced scrypt cost).
const PASSWORD = "tarnholm-line2-nightshift";

describe.skipIf(!HAVE_CHROMIUM)("browser: log in on the glance screen and acknowledge an advisory", () => {
  const demo = new SmoulderedDemo("login");
  let daemon: Daemon;
  let browser: Browser;

  // The whole smoulder, as fast as the daemon takes it: its advisories stay on screen unacknowledged.
  beforeAll(async () => {
    await demo.start([{ user: USER, role: "operator", password: PASSWORD }]);
    ({ daemon, browser } = demo);
  }, 90_000);

  afterAll(() => demo.close());

  it("asks for a login at Acknowledge, logs in through the form, and the acknowledgement is recorded with the user", async () => {
    const { page, errors } = await openPage(browser, WALL, daemon.url!);
    const row = page.locator('li.advisory[data-advisory-id="co-gradient-bf2"]');
    const ack = row.getByRole("button", { name: /^Acknowledge/ });
    await expect.poll(() => ack.isVisible(), { timeout: 15_000 }).toBe(true);
    expect(await row.innerText()).toMatch(/unacknowledged/i);

    // On a loaded machine the row may be re-rendered by a live delta just as it is clicked (the
    // click then lands on the old button): click again while the login panel has not opened.
    const panel = page.locator("#login-panel");
    await expect
      .poll(
        async () => {
          if (!(await panel.isVisible())) await ack.click({ timeout: 2_000 }).catch(() => undefined);
          return panel.isVisible();
        },
        { timeout: 20_000 },
      )
      .toBe(true);
    expect(await page.locator("#login-why").innerText()).toMatch(/Log in to acknowledge/);
    await page.locator("#login-user").fill(USER);
    await page.locator("#login-password").fill(PASSWORD);
    await page.locator("#login-submit").click();
    await expect.poll(() => page.locator("#login-panel").isVisible(), { timeout: 10_000 }).toBe(false);
    await expect.poll(() => page.locator("#session-who").innerText(), { timeout: 5_000 }).toContain(USER);
    expect(await axeViolations(page)).toEqual([]);

    // Logged in: the button opens the row's command form, its submit gives the command.
    await ack.click();
    const form = row.locator("form.cmd-form");
    await expect.poll(() => form.isVisible(), { timeout: 5_000 }).toBe(true);
    expect(await form.innerText()).toContain(`as ${USER}`);
    await form.getByRole("button", { name: "Acknowledge" }).click();
    await expect.poll(() => row.locator(".advisory-state").innerText(), { timeout: 10_000 }).toMatch(new RegExp(`acknowledged by ${USER.replace(".", "\\.")}`));
    await screenshot(page, "glance-1920x1080-acknowledged");

    // The daemon recorded it: the advisory and its ack transition carry the user, never a typed name.
    const res = await fetch(`${daemon.url}/api/advisories?limit=1000`);
    const body = (await res.json()) as { active: AdvisoryView[]; history: AdvisoryTransition[] };
    const view = body.active.find((a) => a.id === "co-gradient-bf2");
    expect(view?.ackedBy).toBe(USER);
    expect(body.history.some((t) => t.advisoryId === "co-gradient-bf2" && t.transition === "ack" && t.by === USER)).toBe(true);
    expect(errors).toEqual([]);
    await page.context().close();
  }, 60_000);
});
