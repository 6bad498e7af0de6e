// Retry delays: exponential backoff with "equal jitter" (half fixed, half random), common
// practice for retries against a shared receiver. The random numbers come from a seeded
// generator, so every figure here is reproducible.
import { describe, expect, it } from "vitest";
import { afterFailure, retryDelayMs, type DeliveryPolicy } from "../../src/notify/backoff.js";
import { seededRandom } from "../../src/notify/service.js";

const POLICY: DeliveryPolicy = { maxAttempts: 6, backoffBaseS: 5, backoffMaxS: 60, giveUpAfterS: 3600 };

describe("retryDelayMs", () => {
  it("doubles from the base up to the cap; random 0 gives half the delay, random near 1 nearly all of it", () => {
    const zero = () => 0;
    expect([1, 2, 3, 4, 5, 6].map((n) => retryDelayMs(n, POLICY, zero))).toEqual([2500, 5000, 10_000, 20_000, 30_000, 30_000]);
    const almostOne = () => 0.999_999;
    expect([1, 2, 3, 4, 5].map((n) => retryDelayMs(n, POLICY, almostOne))).toEqual([5000, 10_000, 20_000, 40_000, 60_000]);
  });

  it("with a seeded generator, the same seed gives the same delays, and each lies in [d/2, d]", () => {
    const a = seededRandom(42);
    const b = seededRandom(42);
    const da = [1, 2, 3, 4, 5].map((n) => retryDelayMs(n, POLICY, a));
    expect([1, 2, 3, 4, 5].map((n) => retryDelayMs(n, POLICY, b))).toEqual(da);
    da.forEach((d, i) => {
      const full = Math.min(60_000, 5000 * 2 ** i);
      expect(d).toBeGreaterThanOrEqual(full / 2);
      expect(d).toBeLessThanOrEqual(full);
    });
    // Different seeds spread entries that failed together.
    expect([1, 2, 3, 4, 5].map((n) => retryDelayMs(n, POLICY, seededRandom(7)))).not.toEqual(da);
  });

  it("refuses nonsense with a clear message", () => {
    expect(() => retryDelayMs(0, POLICY, () => 0)).toThrow(/expected failures as an integer ≥ 1; found 0/);
    expect(() => retryDelayMs(1, POLICY, () => 1)).toThrow(/expected random\(\) in \[0, 1\); found 1/);
  });
});

describe("afterFailure", () => {
  const T = 1_767_690_000_000;
  it("retries a retryable failure, gives up after maxAttempts, and never retries a permanent one", () => {
    expect(afterFailure({ attempts: 0, createdAtMs: T }, true, T, POLICY, () => 0)).toEqual({ state: "failed", nextAttemptMs: T + 2500 });
    expect(afterFailure({ attempts: 5, createdAtMs: T }, true, T, POLICY, () => 0)).toEqual({ state: "dead", why: "gave up after 6 attempts" });
    expect(afterFailure({ attempts: 0, createdAtMs: T }, false, T, POLICY, () => 0)).toEqual({ state: "dead", why: "not worth retrying" });
  });

  it("gives up when the next attempt would come after giveUpAfterS", () => {
    const r = afterFailure({ attempts: 1, createdAtMs: T }, true, T + 3599_000, POLICY, () => 0);
    expect(r).toMatchObject({ state: "dead" });
    expect((r as { why: string }).why).toMatch(/more than 3600 s after the message was made/);
  });
});
