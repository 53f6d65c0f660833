import { describe, expect, it } from 'vitest';
import { passwordWeakness } from './password-strength';

// zxcvbn-ts scores (0–4) from its published dictionaries; we refuse below 3.
describe('passwordWeakness', () => {
  const person = { name: 'Orla Brightwater', email: 'orla.brightwater@lanternfield.test' };
  it.each(['aaaaaaaaaa', '1234567890', 'password123', 'qwertyuiop', 'orla.brightwater@lanternfield.test', 'brightwater2024'])('refuses %s', (pw) => {
    expect(passwordWeakness(pw, person)).toMatch(/^This password is too easy to guess\./);
  });

  it('accepts long uncommon passphrases', () => {
    expect(passwordWeakness('ember-lantern-quiet-42', person)).toBeNull();
    expect(passwordWeakness('correct-horse-battery', person)).toBeNull();
  });
});
