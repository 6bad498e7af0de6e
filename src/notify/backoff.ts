// When to try a failed delivery again: exponential backoff with "equal jitter" (half the
// delay fixed, half drawn at random), common practice for retries against a shared receiver, so
// that many entries failing together do not all come back at the same instant. Pure: the
// random numbers come from the caller (a seeded generator in tests and in the daemon).

export interface DeliveryPolicy {
  /** Attempts in all, the first included; then the entry is dead. */
  maxAttempts: number;
  /** Delay after the first failure, s; doubled after each further one. */
  backoffBaseS: number;
  /** The delay never exceeds this, s. */
  backoffMaxS: number;
  /** An entry older than this is not tried again, s. */
  giveUpAfterS: number;
}

/** Delay before attempt `failures + 1`, after `failures` (≥ 1) failed ones; random() is uniform in [0, 1). */
export function retryDelayMs(failures: number, policy: DeliveryPolicy, random: () => number): number {
  if (!(Number.isInteger(failures) && failures >= 1)) throw new RangeError(`retryDelayMs: expected failures as an integer ≥ 1; found ${failures}`);
  const capMs = policy.backoffMaxS * 1000;
  // 2^(failures-1) overflows nothing before the cap for any sane base; min() keeps it bounded.
  const fullMs = Math.min(capMs, policy.backoffBaseS * 1000 * 2 ** Math.min(failures - 1, 52));
  const u = random();
  if (!(u >= 0 && u < 1)) throw new RangeError(`retryDelayMs: expected random() in [0, 1); found ${u}`);
  return Math.round(fullMs / 2 + (u * fullMs) / 2);
}

/** What becomes of an entry after a failed attempt. */
export function afterFailure(
  e: { attempts: number; createdAtMs: number },
  retry: boolean,
  nowMs: number,
  policy: DeliveryPolicy,
  random: () => number,
): { state: "failed"; nextAttemptMs: number } | { state: "dead"; why: string } {
  const attempts = e.attempts + 1;
  if (!retry) return { state: "dead", why: "not worth retrying" };
  if (attempts >= policy.maxAttempts) return { state: "dead", why: `gave up after ${attempts} attempts` };
  const next = nowMs + retryDelayMs(attempts, policy, random);
  if (next - e.createdAtMs > policy.giveUpAfterS * 1000) return { state: "dead", why: `gave up: the next attempt would be more than ${policy.giveUpAfterS} s after the message was made` };
  return { state: "failed", nextAttemptMs: next };
}
