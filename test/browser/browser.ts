// Shared set-up for the browser tests: Debian's Chromium driven by playwright-core (never a
// downloaded browser), screenshots into test-output/screenshots/ for a person to look at,
// and axe-core run inside the page.
//
// Locally the tests skip, saying why, when /usr/bin/chromium is missing; in CI
// (process.env.CI) a test fails instead, since .ci/run installs it.
import { existsSync, mkdirSync, readFileSync } from "node:fs";
import { join } from "node:path";
import { chromium, type Browser, type Page } from "playwright-core";
import { expect, it } from "vitest";
import type { Daemon } from "../../src/daemon/daemon.js";
import { startEmbeddedBroker, type EmbeddedBroker } from "../../src/daemon/embedded-broker.js";
import { hashPassword } from "../../src/server/passwords.js";
import { runSimulator } from "../../src/sim/publish.js";
import type { AccountRole } from "../../src/store/accounts.js";
import { demoConfigFor, startTestDaemon, tempDir, waitFor } from "../integration/helpers.js";

export const CHROMIUM = "/usr/bin/chromium";
export const HAVE_CHROMIUM = existsSync(CHROMIUM);

/** The arguments that work here as root (STACK.md, "Gotchas"). */
const CHROMIUM_ARGS = [
  "--headless",
  "--no-sandbox",
  "--disable-gpu",
  "--disable-quic",
  "--no-first-run",
  "--disable-background-networking",
  "--disable-component-update",
  "--disable-sync",
];

export const SCREENSHOT_DIR = join(import.meta.dirname, "../../test-output/screenshots");

/** 1920×1080: the control-room screen (24-inch 1080p). */
export const WALL = { width: 1920, height: 1080 };
/** A phone in portrait (CSS pixels of a common 6.1-inch phone). */
export const PHONE = { width: 390, height: 844 };

if (!HAVE_CHROMIUM && !process.env.CI) {
  console.warn(`browser tests skipped: ${CHROMIUM} is missing (install Debian's chromium package: apt-get install chromium)`);
}

/** The one test that does not skip: in CI the browser must be there. */
export function requireChromiumInCi(): void {
  it(`has ${CHROMIUM} when running in CI (.ci/run installs it)`, () => {
    expect(HAVE_CHROMIUM || !process.env.CI, `${CHROMIUM} is missing in CI`).toBe(true);
  });
}

export async function launchChromium(): Promise<Browser> {
  return chromium.launch({ executablePath: CHROMIUM, args: CHROMIUM_ARGS });
}

/** A page that fails the test on any script error or console error it sees. */
export async function openPage(browser: Browser, viewport: { width: number; height: number }, url: string): Promise<{ page: Page; errors: string[] }> {
  const context = await browser.newContext({ viewport, deviceScaleFactor: viewport.width < 600 ? 2 : 1 });
  const page = await context.newPage();
  const errors: string[] = [];
  page.on("pageerror", (e) => errors.push(`page error: ${e.message}`));
  page.on("console", (m) => {
    if (m.type() === "error") errors.push(`console error: ${m.text()}`);
  });
  await page.goto(url);
  return { page, errors };
}

export async function screenshot(page: Page, name: string, fullPage = false): Promise<string> {
  mkdirSync(SCREENSHOT_DIR, { recursive: true });
  const path = join(SCREENSHOT_DIR, `${name}.png`);
  await page.screenshot({ path, fullPage });
  return path;
}

const AXE_SOURCE = readFileSync(join(import.meta.dirname, "../../node_modules/axe-core/axe.min.js"), "utf8");

export interface AxeViolation {
  id: string;
  impact: string | null;
  help: string;
  nodes: { target: string[]; failureSummary: string }[];
}

/**
 * axe-core's WCAG 2 A and AA rules on the page as it is now (injected through the DevTools
 * protocol, which the page's Content-Security-Policy does not govern). Returns the violations,
 * shortened to what a failing test should print.
 */
export async function axeViolations(page: Page): Promise<AxeViolation[]> {
  if (!(await page.evaluate(() => "axe" in window))) await page.evaluate(AXE_SOURCE);
  return page.evaluate(async () => {
    // axe is a global once its source has run.
    const axe = (window as unknown as { axe: { run(ctx: Document, opts: object): Promise<{ violations: AxeViolation[] }> } }).axe;
    const result = await axe.run(document, { runOnly: { type: "tag", values: ["wcag2a", "wcag2aa", "wcag21a", "wcag21aa"] }, resultTypes: ["violations"] });
    return result.violations.map((v) => ({
      id: v.id,
      impact: v.impact,
      help: v.help,
      nodes: v.nodes.slice(0, 5).map((n) => ({ target: n.target, failureSummary: n.failureSummary })),
    }));
  });
}

/** The smoulder's start time in the tests that replay it whole (30 Nov 2026, 05:00 UTC). */
export const SMOULDER_START_MS = Date.UTC(2026, 10, 30, 5, 0, 0);

/**
 * The demo daemon (data clock, config/demo.yaml) behind an embedded broker, with accounts made
 * the way `millwarden user add` does (scrypt at a reduced cost, so the test does not spend
 * seconds hashing), fed the whole filter-smoulder scenario as fast as it takes it, until the bag
 * filter CO gradient advisory stands unacknowledged; then Chromium. `start` in beforeAll, `close`
 * in afterAll: it stops what was started even when `start` did not finish.
 */
export class SmoulderedDemo {
  private broker: EmbeddedBroker | undefined;
  private started: Daemon | undefined;
  private chromium: Browser | undefined;
  private dir: ReturnType<typeof tempDir> | undefined;
  private readonly name: string;

  /** `name` keeps the folder and the topic prefix apart from the other test files'. */
  constructor(name: string) {
    this.name = name;
  }

  get daemon(): Daemon {
    if (!this.started) throw new Error(`SmoulderedDemo ${this.name}: no daemon; expected start() to have finished in beforeAll`);
    return this.started;
  }

  get browser(): Browser {
    if (!this.chromium) throw new Error(`SmoulderedDemo ${this.name}: no browser; expected start() to have finished in beforeAll`);
    return this.chromium;
  }

  async start(accounts: { user: string; role: AccountRole; password: string }[]): Promise<void> {
    this.broker = await startEmbeddedBroker(0);
    this.dir = tempDir(`mw-browser-${this.name}-`);
    const prefix = `mw-browser-${this.name}/${process.pid}-${Math.random().toString(16).slice(2, 8)}`;
    const { daemon } = await startTestDaemon(demoConfigFor(this.broker.url, prefix, this.dir.path));
    this.started = daemon;
    const store = daemon.historian.accounts();
    for (const a of accounts) store.addUser(a.user, a.role, await hashPassword(a.password, { logN: 10, r: 8, p: 1 }), Date.now());
    await runSimulator({ scenario: "filter-smoulder", mqttUrl: this.broker.url, topicPrefix: prefix, speed: 300, startTimeMs: SMOULDER_START_MS, seed: 11 });
    await waitFor(() => daemon.engine.currentAdvisories().some((a) => a.id === "co-gradient-bf2" && (a.state === "unack" || a.state === "rtn-unack")), 20_000, "the bag filter CO gradient advisory, unacknowledged");
    this.chromium = await launchChromium();
  }

  async close(): Promise<void> {
    await this.chromium?.close();
    await this.started?.stop();
    await this.broker?.close();
    this.dir?.remove();
  }
}
