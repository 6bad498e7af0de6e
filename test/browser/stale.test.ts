// Data age and a lost connection on the glance screen, in a real browser, against the demo
// pieces on loopback run as the real-time demo runs them: the daemon on the wall clock and the
// simulator at 1× (the plant's own pace, one update per second and signal).
//   - live values change;
//   - stopping the simulator makes every value stale on screen, with its age in words
//     ("no data 5 s"), never a calm number: the signals' expected period is 1 s and a signal is
//     stale after 3 periods without an update (DEVELOPERS.md, "Architecture");
//   - stopping the daemon makes the lost connection unmistakable (a full-width strip, the
//     values greyed and hatched).
// Screenshots of both states land in test-output/screenshots/.
import type { Browser, Page } from "playwright-core";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { startEmbeddedBroker, type EmbeddedBroker } from "../../src/daemon/embedded-broker.js";
import type { Daemon } from "../../src/daemon/daemon.js";
import { runSimulator } from "../../src/sim/publish.js";
import { demoConfigFor, startTestDaemon, tempDir } from "../integration/helpers.js";
import { HAVE_CHROMIUM, PHONE, WALL, axeViolations, launchChromium, openPage, screenshot } from "./browser.js";

const text = (page: Page, selector: string) => page.locator(selector).first().innerText();

describe.skipIf(!HAVE_CHROMIUM)("browser: stale values and a lost connection on the glance screen (wall clock, 1×)", () => {
  let broker: EmbeddedBroker;
  let daemon: Daemon;
  let dir: ReturnType<typeof tempDir>;
  let browser: Browser;
  let simulator: Promise<unknown> = Promise.resolve();
  const abort = new AbortController();
  let stopped = false;

  beforeAll(async () => {
    broker = await startEmbeddedBroker(0);
    dir = tempDir("mw-browser-stale-");
    const prefix = `mw-browser-stale/${process.pid}-${Math.random().toString(16).slice(2, 8)}`;
    ({ daemon } = await startTestDaemon({ ...demoConfigFor(broker.url, prefix, dir.path), clock: "wall" }));
    // Steady grinding, published in real time from now on.
    simulator = runSimulator({ scenario: "filter-smoulder", mqttUrl: broker.url, topicPrefix: prefix, speed: 1, startTimeMs: Date.now(), seed: 7, signal: abort.signal });
    browser = await launchChromium();
  }, 60_000);

  afterAll(async () => {
    abort.abort();
    await simulator.catch(() => undefined);
    await browser?.close();
    if (!stopped) await daemon?.stop();
    await broker?.close();
    dir?.remove();
  });

  it("shows values that change, then stale with their age once the simulator stops, then the lost connection", async () => {
    const { page, errors } = await openPage(browser, WALL, daemon.url!);
    const o2 = page.locator(".unit", { hasText: "Bag filter BF2" }).locator(".unit-figures .value").first();
    await expect.poll(async () => /^\d+\.\d$/.test(await o2.innerText()), { timeout: 15_000 }).toBe(true);
    const time1 = await text(page, "#data-time");
    await expect.poll(() => text(page, "#data-time"), { timeout: 5_000 }).not.toBe(time1);
    // The figures move with the plant (analyser noise at least): some value changes within a few seconds.
    const figures = () => page.locator(".unit-figures .value, .co-figures .value, .dew-table .value").allInnerTexts();
    const before = (await figures()).join("|");
    await expect.poll(async () => (await figures()).join("|"), { timeout: 10_000 }).not.toBe(before);
    expect(await page.locator(".is-stale").count()).toBe(0);

    abort.abort();
    await simulator;
    // Within 3 expected periods plus a tick or two, every figure is replaced by its age.
    await expect.poll(() => page.locator(".unit-figures .value.is-stale").count(), { timeout: 15_000 }).toBe(3);
    await expect.poll(() => page.locator(".co-figures .value.is-stale").count(), { timeout: 5_000 }).toBe(3);
    expect(await text(page, ".co-figures .value.is-stale")).toMatch(/^no data \d+ s$/);
    // No number is left standing where a stale signal was, and the data panel says so.
    expect(await page.locator(".co-figures .value:not(.is-stale)").count()).toBe(0);
    expect(await text(page, "#data-health")).toMatch(/signals need attention: .*no data \d+ s/);
    // Advisories on stale inputs are not cleared as "safe": the board shows no new calm.
    await screenshot(page, "glance-1920x1080-stale");
    expect(await axeViolations(page)).toEqual([]);
    const phone = await openPage(browser, PHONE, daemon.url!);
    await expect.poll(() => phone.page.locator(".co-figures .value.is-stale").count(), { timeout: 10_000 }).toBe(3);
    await screenshot(phone.page, "glance-phone-stale", true);
    await phone.page.context().close();

    await daemon.stop();
    stopped = true;
    await expect.poll(() => page.locator("#conn-lost").isVisible(), { timeout: 10_000 }).toBe(true);
    expect(await text(page, "#conn-lost-title")).toMatch(/connection lost/i);
    expect(await text(page, "#conn-lost-text")).toMatch(/values frozen since \d\d:\d\d:\d\d/);
    expect(await page.evaluate(() => document.body.classList.contains("is-offline"))).toBe(true);
    expect(await text(page, "#conn-text")).toBe("connection lost");
    await screenshot(page, "glance-1920x1080-connection-lost");
    // The browser logs the refused reconnection attempts itself; the page's own scripts must not fail.
    expect(errors.filter((e) => !/WebSocket connection to .* failed|Failed to load resource|ERR_CONNECTION_REFUSED/.test(e))).toEqual([]);
    await page.context().close();
  }, 90_000);
});
