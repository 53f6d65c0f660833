import { describe, expect, it } from 'vitest';
import { createRateLimiter } from './rate-limit';

describe('createRateLimiter', () => {
  it('allows max hits per window and key, then refuses until the window ends', () => {
    const limiter = createRateLimiter({ windowMs: 60_000, max: 3 });
    const t0 = 1_000_000;
    expect([1, 2, 3].map((i) => limiter.hit('a', t0 + i).ok)).toEqual([true, true, true]);
    const refused = limiter.hit('a', t0 + 10_000);
    expect(refused.ok).toBe(false);
    expect(refused.retryAfterSeconds).toBe(51);
    expect(limiter.hit('b', t0 + 10_000).ok).toBe(true);
    expect(limiter.hit('a', t0 + 60_001).ok).toBe(true);
  });
});
