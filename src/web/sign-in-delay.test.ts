import { describe, expect, it } from 'vitest';
import { ACCOUNT_RULE, ADDRESS_RULE, createSignInDelay, waitAfterFailures } from './sign-in-delay';

describe('waitAfterFailures', () => {
  it('follows the documented schedule: 3 free failures per account, then 5 s doubling, at most 15 min', () => {
    expect([1, 2, 3, 4, 5, 6, 10, 11, 40].map((n) => waitAfterFailures(n, ACCOUNT_RULE) / 1000)).toEqual([0, 0, 5, 10, 20, 40, 640, 900, 900]);
    expect([9, 10, 11].map((n) => waitAfterFailures(n, ADDRESS_RULE) / 1000)).toEqual([0, 5, 10]);
  });
});

describe('createSignInDelay', () => {
  it('makes an account wait after its third failure, from any address, until the wait is over', () => {
    const d = createSignInDelay();
    const t0 = 5_000_000;
    for (let i = 0; i < 3; i++) {
      expect(d.refusal('Vega@Example.test', `198.51.100.${i}`, t0 + i)).toBeNull();
      d.failed('vega@example.test', `198.51.100.${i}`, t0 + i);
    }
    const r = d.refusal('vega@example.test', '203.0.113.50', t0 + 1000);
    expect(r?.retryAfterSeconds).toBe(5);
    expect(r?.message).toMatch(/Wait 5 seconds/);
    expect(d.refusal('someone.else@example.test', '203.0.113.50', t0 + 1000)).toBeNull();
    expect(d.refusal('vega@example.test', '203.0.113.50', t0 + 2 + 5000)).toBeNull();
    d.failed('vega@example.test', '203.0.113.50', t0 + 6000);
    expect(d.refusal('vega@example.test', '203.0.113.50', t0 + 6001)?.retryAfterSeconds).toBe(10);
  });

  it('clears an account on success, but not an address', () => {
    const d = createSignInDelay();
    for (let i = 0; i < 10; i++) d.failed(`user${i}@example.test`, '192.0.2.7', 1000 + i);
    expect(d.refusal('fresh@example.test', '192.0.2.7', 2000)?.retryAfterSeconds).toBe(5);
    expect(d.refusal('fresh@example.test', '192.0.2.8', 2000)).toBeNull();
    d.succeeded('user9@example.test', '192.0.2.7');
    expect(d.refusal('user9@example.test', '192.0.2.8', 2000)).toBeNull();
    expect(d.refusal('fresh@example.test', '192.0.2.7', 2000)).not.toBeNull();
  });
});
