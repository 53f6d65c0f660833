import { describe, expect, it } from 'vitest';
import { createRateLimiter, refuseTooManyPosts, type FormPage } from './rate-limit';

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

describe('refuseTooManyPosts', () => {
  const page = (method: string, address: string, limitOn = true): FormPage => ({
    request: new Request('http://127.0.0.1:4321/sign-in', { method }),
    response: {},
    locals: { clientAddress: address, app: { env: { authRateLimit: limitOn } } },
  });

  it('lets ten posts a minute through per form and address, then answers 429 with a wait time', () => {
    const address = `198.51.100.${Math.floor(Math.random() * 200)}`;
    for (let i = 0; i < 10; i++) expect(refuseTooManyPosts(page('POST', address), 'test-form')).toBeNull();
    const p = page('POST', address);
    expect(refuseTooManyPosts(p, 'test-form')?.message).toMatch(/^Too many attempts\. Wait \d+ seconds and try again\.$/);
    expect(p.response.status).toBe(429);
    // Another form, a page view, or the limit switched off are not counted against it.
    expect(refuseTooManyPosts(page('POST', address), 'other-form')).toBeNull();
    expect(refuseTooManyPosts(page('GET', address), 'test-form')).toBeNull();
    expect(refuseTooManyPosts(page('POST', address, false), 'test-form')).toBeNull();
  });
});
