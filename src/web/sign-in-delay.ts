// A growing wait after failed sign-ins, per account and per client address, on both ways in: the
// sign-in page and better-auth's POST /api/auth/sign-in/email. While the wait runs, attempts are
// refused with 429 before the password is looked at, so the wait bounds guessing whatever the
// password. The schedule (docs/decisions/0019-rate-limits-and-client-address.md):
//
//   account (the e-mail as typed, lower-cased; known or not, so the answer tells nothing):
//     the first 3 failures cost nothing; after the n-th (n ≥ 3) the next attempt waits
//     5 s · 2^(n−3): 5 s, 10 s, 20 s, 40 s, 80 s, 160 s, 320 s, 640 s, then 15 min at most.
//     A successful sign-in clears it; so does a day without failures.
//   address (locals.clientAddress): the same with 10 free failures, so one address trying many
//     accounts slows down too; cleared an hour after its last failure (not by a success).
//
// One web process serves sign-ins, so the counters live in its memory; a restart forgets them.

export interface DelayRule {
  freeFailures: number;
  firstWaitMs: number;
  maxWaitMs: number;
  forgetAfterMs: number;
  clearedBySuccess: boolean;
}

export const ACCOUNT_RULE: DelayRule = { freeFailures: 3, firstWaitMs: 5_000, maxWaitMs: 15 * 60_000, forgetAfterMs: 24 * 60 * 60_000, clearedBySuccess: true };
export const ADDRESS_RULE: DelayRule = { freeFailures: 10, firstWaitMs: 5_000, maxWaitMs: 15 * 60_000, forgetAfterMs: 60 * 60_000, clearedBySuccess: false };

/** The wait after `failures` consecutive failures under `rule`, in ms (0: none). */
export function waitAfterFailures(failures: number, rule: DelayRule): number {
  if (failures < rule.freeFailures) return 0;
  return Math.min(rule.maxWaitMs, rule.firstWaitMs * 2 ** (failures - rule.freeFailures));
}

interface Record {
  failures: number;
  lastFailureMs: number;
}

class FailureBook {
  private readonly records = new Map<string, Record>();
  constructor(private readonly rule: DelayRule) {}

  private current(key: string, nowMs: number): Record | undefined {
    const r = this.records.get(key);
    if (r && nowMs - r.lastFailureMs >= this.rule.forgetAfterMs) {
      this.records.delete(key);
      return undefined;
    }
    return r;
  }

  /** Ms still to wait before `key` may try again (0: now). */
  waitMs(key: string, nowMs: number): number {
    const r = this.current(key, nowMs);
    if (!r) return 0;
    return Math.max(0, r.lastFailureMs + waitAfterFailures(r.failures, this.rule) - nowMs);
  }

  failed(key: string, nowMs: number): void {
    if (this.records.size > 50_000) {
      for (const [k] of this.records) this.current(k, nowMs);
    }
    const r = this.current(key, nowMs) ?? { failures: 0, lastFailureMs: nowMs };
    r.failures += 1;
    r.lastFailureMs = nowMs;
    this.records.set(key, r);
  }

  succeeded(key: string): void {
    if (this.rule.clearedBySuccess) this.records.delete(key);
  }
}

export interface SignInDelay {
  /** null: go ahead; else the seconds to wait (the attempt is not made and not counted). */
  refusal(email: string, address: string, nowMs?: number): { retryAfterSeconds: number; message: string } | null;
  failed(email: string, address: string, nowMs?: number): void;
  succeeded(email: string, address: string): void;
}

const accountKey = (email: string) => email.trim().toLowerCase();

export function createSignInDelay(accountRule = ACCOUNT_RULE, addressRule = ADDRESS_RULE): SignInDelay {
  const accounts = new FailureBook(accountRule);
  const addresses = new FailureBook(addressRule);
  return {
    refusal(email, address, nowMs = Date.now()) {
      const wait = Math.max(accounts.waitMs(accountKey(email), nowMs), addresses.waitMs(address, nowMs));
      if (wait <= 0) return null;
      const retryAfterSeconds = Math.ceil(wait / 1000);
      return {
        retryAfterSeconds,
        message: `Too many failed sign-ins. Wait ${retryAfterSeconds} seconds and try again, or reset your password.`,
      };
    },
    failed(email, address, nowMs = Date.now()) {
      accounts.failed(accountKey(email), nowMs);
      addresses.failed(address, nowMs);
    },
    succeeded(email, address) {
      accounts.succeeded(accountKey(email));
      addresses.succeeded(address);
    },
  };
}

/** The web process's counters. */
export const signInDelay = createSignInDelay();

/**
 * One sign-in attempt under the delay: refused (429 wait) while a wait runs; otherwise `attempt`
 * runs and its answer is counted (401 a failure, 2xx a success). `limited` false: just the attempt.
 */
export async function signInUnderDelay(
  locals: { clientAddress: string; app: { env: { authRateLimit: boolean } } },
  email: string,
  attempt: () => Promise<Response>,
): Promise<{ response: Response; wait?: undefined } | { wait: { retryAfterSeconds: number; message: string }; response?: undefined }> {
  if (!locals.app.env.authRateLimit) return { response: await attempt() };
  const wait = signInDelay.refusal(email, locals.clientAddress);
  if (wait) return { wait };
  const response = await attempt();
  if (response.ok) signInDelay.succeeded(email, locals.clientAddress);
  else if (response.status === 401) signInDelay.failed(email, locals.clientAddress);
  return { response };
}
