// The glance screen and the trends page in a real browser (Debian's Chromium), against the
// real demo pieces on loopback: the embedded broker on an ephemeral port, the simulator's
// filter-smoulder scenario at 120× and the daemon (data clock) with its server on
// 127.0.0.1 port 0. What a person would check by looking, checked in the page:
//   - the glance screen shows live values, and they change;
//   - the smoulder in the bag filter brings a caution, then a warning, on screen (the order
//     the rule's tiers give: 5 then 15 ppm/min, config/demo.yaml);
//   - the trends page draws the history with the rule's limits and the advisory marks, and zooms;
//   - once the simulator stops, the data clock stands still: the screen says no updates come;
//   - axe-core (WCAG 2 A/AA, colour contrast and labels among them) finds nothing on either page.
// Screenshots at 1920×1080 and phone size land in test-output/screenshots/.
import type { Browser, Page } from "playwright-core";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { startEmbeddedBroker, type EmbeddedBroker } from "../../src/daemon/embedded-broker.js";
import type { Daemon } from "../../src/daemon/daemon.js";
import { createScenario } from "../../src/sim/plant.js";
import { runSimulator } from "../../src/sim/publish.js";
import { demoConfigFor, startTestDaemon, tempDir, waitFor } from "../integration/helpers.js";
import { HAVE_CHROMIUM, PHONE, WALL, axeViolations, launchChromium, openPage, requireChromiumInCi, screenshot } from "./browser.js";

const START = Date.UTC(2026, 10, 30, 5, 0, 0);
const SPEED = 120; // simulated seconds per real second: the 40-minute scenario in 20 s
const SCENARIO = "filter-smoulder";

/** Installed before the page's own scripts: notes the first moment each advisory row shows each tier. */
function recordTiers(): void {
  const w = window as unknown as { __tiersSeen: { id: string; tier: string; atMs: number }[] };
  w.__tiersSeen = [];
  const seen = new Set<string>();
  const scan = () => {
    for (const li of document.querySelectorAll("li.advisory[data-advisory-id]")) {
      const tier = ["warning", "caution", "notice"].find((t) => li.classList.contains(`tier-${t}`));
      const id = li.getAttribute("data-advisory-id")!;
      if (tier && !seen.has(`${id}/${tier}`)) {
        seen.add(`${id}/${tier}`);
        w.__tiersSeen.push({ id, tier, atMs: performance.now() });
      }
    }
  };
  new MutationObserver(scan).observe(document, { subtree: true, childList: true, attributes: true, attributeFilter: ["class"] });
}

const text = (page: Page, selector: string) => page.locator(selector).first().innerText();

describe("browser: Chromium is available", () => requireChromiumInCi());

describe.skipIf(!HAVE_CHROMIUM)(`browser: the glance screen and the trends page through "${SCENARIO}"`, () => {
  let broker: EmbeddedBroker;
  let daemon: Daemon;
  let dir: ReturnType<typeof tempDir>;
  let browser: Browser;
  let simulator: Promise<unknown> = Promise.resolve();
  let prefix = "";
  const abort = new AbortController();
  const sc = createScenario(SCENARIO, { startTimeMs: START, seed: 11 });
  const lastFrameMs = START + Math.floor((sc.durationS - sc.stepS) / sc.stepS) * sc.stepS * 1000;

  beforeAll(async () => {
    broker = await startEmbeddedBroker(0);
    dir = tempDir("mw-browser-");
    prefix = `mw-browser/${process.pid}-${Math.random().toString(16).slice(2, 8)}`;
    ({ daemon } = await startTestDaemon(demoConfigFor(broker.url, prefix, dir.path)));
    browser = await launchChromium();
  }, 60_000);

  afterAll(async () => {
    abort.abort();
    await simulator.catch(() => undefined);
    await browser?.close();
    await daemon?.stop();
    await broker?.close();
    dir?.remove();
  });

  it("shows live values that change, then a caution and after it a warning as the bag filter smoulders", async () => {
    const { page, errors } = await openPage(browser, WALL, "about:blank");
    await page.addInitScript(recordTiers);
    await page.goto(daemon.url!);
    await expect.poll(() => text(page, "#conn-text"), { timeout: 10_000 }).toBe("live");
    // The advisory-only words are on screen from the start and never leave.
    expect(await text(page, "#advisory-only")).toMatch(/^ADVISORY ONLY/);

    // The simulator starts once the screen is open, so the screen sees the whole scenario.
    simulator = runSimulator({ scenario: SCENARIO, mqttUrl: broker.url, topicPrefix: prefix, speed: SPEED, startTimeMs: START, seed: 11, signal: abort.signal });
    await expect.poll(() => text(page, "#data-time"), { timeout: 15_000 }).toMatch(/^(\d{4}-\d\d-\d\d )?\d\d:\d\d:\d\d$/);
    const point = page.locator(".co", { hasText: "Bag filter outlet" }).locator(".co-figures .value").first();
    await expect.poll(async () => /^\d+$/.test(await point.innerText()), { timeout: 15_000 }).toBe(true);
    const firstTime = await text(page, "#data-time");
    const firstCo = await point.innerText();
    // Live: the data time moves and the smouldering filter's CO climbs.
    await expect.poll(() => text(page, "#data-time"), { timeout: 10_000 }).not.toBe(firstTime);
    await expect.poll(() => point.innerText(), { timeout: 20_000 }).not.toBe(firstCo);
    // The phase, the O2 bars with their limit and the lowest dew point margin are there.
    expect(await text(page, "#phase-list")).toMatch(/VM2\s+GRINDING/i);
    expect(await page.locator(".unit .bar .limit").count()).toBe(3);
    expect(await text(page, "#dew-lowest")).toMatch(/Lowest margin\s+\d+\.\d K\s+at Bag filter outlet/);

    const seen = async () => page.evaluate(() => (window as unknown as { __tiersSeen: { id: string; tier: string; atMs: number }[] }).__tiersSeen);
    await waitForAsync(async () => (await seen()).some((s) => s.id === "co-gradient-bf2" && s.tier === "warning"), 40_000, "a warning on the bag filter CO gradient");
    const gradient = (await seen()).filter((s) => s.id === "co-gradient-bf2");
    const caution = gradient.find((s) => s.tier === "caution");
    const warning = gradient.find((s) => s.tier === "warning");
    expect(caution, "the caution was on screen before the warning").toBeDefined();
    expect(caution!.atMs).toBeLessThan(warning!.atMs);
    // The warning row: its word, its shape (a diamond), highest tier first in the list.
    const row = page.locator('li.advisory[data-advisory-id="co-gradient-bf2"]');
    expect(await row.locator(".tier-word").innerText()).toMatch(/warning/i);
    expect(await row.locator("svg.tier-icon polygon").getAttribute("points")).toBe("20,1.5 38.5,20 20,38.5 1.5,20");
    const tiers = await page.locator("#advisory-list > li.advisory").evaluateAll((lis) =>
      lis.map((li) => ["warning", "caution", "notice"].find((t) => li.classList.contains(`tier-${t}`))),
    );
    const rank: Record<string, number> = { warning: 3, caution: 2, notice: 1 };
    const ranks = tiers.map((t) => rank[t ?? ""] ?? 0);
    expect(ranks).toEqual([...ranks].sort((a, b) => b - a));
    // The CO point carries the tier too (its word beside the name).
    expect(await page.locator(".co.tier-warning", { hasText: "Bag filter outlet" }).count()).toBe(1);

    await screenshot(page, "glance-1920x1080-smoulder-warning");
    expect(await axeViolations(page)).toEqual([]);

    const phone = await openPage(browser, PHONE, daemon.url!);
    await expect.poll(() => phone.page.locator('li.advisory[data-advisory-id="co-gradient-bf2"]').count(), { timeout: 10_000 }).toBe(1);
    await screenshot(phone.page, "glance-phone-smoulder-warning", true);
    expect(await axeViolations(phone.page)).toEqual([]);
    // On the phone too, the advisory-only words stay in view while scrolling.
    await phone.page.mouse.wheel(0, 3000);
    const banner = await phone.page.locator("#advisory-only").boundingBox();
    expect(banner?.y).toBe(0);
    await phone.page.context().close();
    expect(errors).toEqual([]);
    await page.context().close();
  }, 90_000);

  it("the trends page draws the smoulder with the rule's limits and the advisory marks, and zooms", async () => {
    await simulator;
    await waitFor(() => daemon.coreNowMs >= Math.floor(lastFrameMs / 1000) * 1000, 30_000, "the daemon to reach the scenario's last frame");
    const series = ["bf2.outlet.co", "co.bf2-outlet.gradientPpmPerMin", "o2.bf2.o2PctVol"];
    const { page, errors } = await openPage(browser, WALL, `${daemon.url}/trends.html?range=1h&series=${series.join(",")}`);
    await expect.poll(() => page.evaluate(() => document.body.dataset.plotted), { timeout: 15_000 }).toBe("3");
    // Three panes (ppm, ppm/min, % vol) on one time axis; each canvas has ink on it.
    expect(await page.locator(".pane .pane-unit").allInnerTexts()).toEqual(["ppm", "ppm/min", "% vol"]);
    const inked = await page.locator(".pane canvas").evaluateAll((canvases) =>
      canvases.map((c) => {
        const cv = c as HTMLCanvasElement;
        const data = cv.getContext("2d")!.getImageData(0, 0, cv.width, cv.height).data;
        let dark = 0;
        for (let i = 0; i < data.length; i += 4) if (data[i + 3]! > 0 && data[i]! < 100 && data[i + 1]! < 100 && data[i + 2]! < 100) dark += 1;
        return dark;
      }),
    );
    for (const dark of inked) expect(dark).toBeGreaterThan(500);
    // The rule's limits, in words beside the plot, and the O2 limit from the unit.
    const legends = await page.locator(".pane .legend").allInnerTexts();
    expect(legends[1]).toContain("caution above 5 ppm/min (co-gradient-bf2)");
    expect(legends[1]).toContain("warning above 15 ppm/min (co-gradient-bf2)");
    expect(legends[2]).toMatch(/O2 limit 13 % dry/);
    // The advisory marks of the smoulder, listed with their tier word.
    const marks = page.locator('#marks li[data-advisory-id="co-gradient-bf2"]');
    expect(await marks.filter({ hasText: /warning/i }).count()).toBeGreaterThan(0);
    expect(await marks.filter({ hasText: /caution/i }).count()).toBeGreaterThan(0);
    await screenshot(page, "trends-1920x1080-smoulder");
    expect(await axeViolations(page)).toEqual([]);

    // Zoom by dragging across the middle of the first plot: the window and the URL follow.
    const before = await text(page, "#window-text");
    const over = await page.locator(".pane .u-over").first().boundingBox();
    await page.mouse.move(over!.x + over!.width * 0.4, over!.y + over!.height / 2);
    await page.mouse.down();
    await page.mouse.move(over!.x + over!.width * 0.6, over!.y + over!.height / 2, { steps: 8 });
    await page.mouse.up();
    await expect.poll(() => text(page, "#window-text"), { timeout: 10_000 }).toMatch(/\(zoomed\)$/);
    expect(await text(page, "#window-text")).not.toBe(before);
    expect(new URL(page.url()).searchParams.get("from")).toMatch(/^\d+$/);
    expect(await page.locator("#zoom-reset").isVisible()).toBe(true);
    await page.locator("#zoom-reset").click();
    await expect.poll(() => text(page, "#window-text"), { timeout: 10_000 }).not.toMatch(/zoomed/);
    // The ranges: 7 days is one click away and says it is the chosen one.
    await page.getByRole("button", { name: "7 days" }).click();
    await expect.poll(() => page.getByRole("button", { name: "7 days" }).getAttribute("aria-pressed")).toBe("true");
    await expect.poll(() => text(page, "#window-text")).toMatch(/· 7 d$/);

    const phone = await openPage(browser, PHONE, `${daemon.url}/trends.html?range=1h&series=${series.join(",")}`);
    await expect.poll(() => phone.page.evaluate(() => document.body.dataset.plotted), { timeout: 15_000 }).toBe("3");
    await screenshot(phone.page, "trends-phone-smoulder", true);
    await phone.page.context().close();
    expect(errors).toEqual([]);
    await page.context().close();
  }, 90_000);

  it("once the simulator has stopped, the data clock stands still and the screen says that no updates come", async () => {
    await simulator;
    const { page, errors } = await openPage(browser, WALL, daemon.url!);
    await expect.poll(() => text(page, "#conn-text"), { timeout: 10_000 }).toBe("live");
    // Nothing has gone stale by the data's own (frozen) clock: only the silence of the feed
    // tells. After 20 s of it (glance.js, QUIET_WARN_MS) the values are shown as frozen.
    expect(await page.locator("#conn-lost").isVisible()).toBe(false);
    await expect.poll(() => page.locator("#conn-lost").isVisible(), { timeout: 35_000, interval: 1000 }).toBe(true);
    expect(await text(page, "#conn-lost-title")).toMatch(/no updates/i);
    expect(await text(page, "#conn-lost-text")).toMatch(/the daemon has sent nothing: no update for \d+ s · values as of \d\d:\d\d:\d\d data time/);
    expect(await page.evaluate(() => document.body.classList.contains("is-offline"))).toBe(true);
    await screenshot(page, "glance-1920x1080-no-updates");
    expect(errors).toEqual([]);
    await page.context().close();
  }, 60_000);
});

async function waitForAsync(cond: () => Promise<boolean>, timeoutMs: number, what: string): Promise<void> {
  const end = Date.now() + timeoutMs;
  while (!(await cond())) {
    if (Date.now() > end) throw new Error(`timed out after ${timeoutMs} ms waiting for ${what}`);
    await new Promise((r) => setTimeout(r, 100));
  }
}
