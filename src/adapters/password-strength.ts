// Password strength by zxcvbn-ts (@zxcvbn-ts/core with its common and English dictionaries): it
// matches a password against tens of thousands of common passwords, names and words, keyboard
// patterns, repeats, sequences, dates and l33t spellings, and against the account's own name and
// e-mail address, and estimates the guesses needed. We accept score 3 or more ("safely
// unguessable: moderate protection from offline slow-hash scenario", about 10^8 guesses and up).
// Checked on sign-up, password reset and password change (src/adapters/auth.ts hooks and
// src/server/accounts.ts).
import { ZxcvbnFactory } from '@zxcvbn-ts/core';
import * as zxcvbnCommon from '@zxcvbn-ts/language-common';
import * as zxcvbnEn from '@zxcvbn-ts/language-en';

export const PASSWORD_MIN_SCORE = 3;

let factory: ZxcvbnFactory | undefined;
function estimator(): ZxcvbnFactory {
  factory ??= new ZxcvbnFactory({
    dictionary: { ...zxcvbnCommon.dictionary, ...zxcvbnEn.dictionary },
    graphs: zxcvbnCommon.adjacencyGraphs,
    translations: zxcvbnEn.translations,
  });
  return factory;
}

/** The words of a name and an e-mail address that a password must not lean on. */
function personalInputs(person: { name?: string | null; email?: string | null }): string[] {
  const out = new Set<string>();
  for (const value of [person.name, person.email]) {
    if (!value) continue;
    const v = value.trim().toLowerCase();
    if (v) out.add(v);
    for (const part of v.split(/[\s@.+_-]+/)) if (part.length >= 3) out.add(part);
  }
  return [...out];
}

/** Null when the password is strong enough, else a message saying why not and what to do. */
export function passwordWeakness(password: string, person: { name?: string | null; email?: string | null } = {}): string | null {
  const result = estimator().check(password, personalInputs(person));
  if (result.score >= PASSWORD_MIN_SCORE) return null;
  const why = result.feedback.warning ? `${result.feedback.warning} ` : '';
  const hint = result.feedback.suggestions.length > 0 ? result.feedback.suggestions.join(' ') : 'Use a few uncommon words together.';
  return `This password is too easy to guess. ${why}${hint}`.replace(/\s+/g, ' ').trim();
}
