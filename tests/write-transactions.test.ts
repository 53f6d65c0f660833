// Every transaction in the code that writes is IMMEDIATE. A deferred transaction that reads and then
// writes asks SQLite to upgrade its read lock while another process writes; SQLite answers
// SQLITE_BUSY at once (the busy timeout does not apply to an upgrade), which is how imports failed
// with "database is locked" while workers fitted. A read-only transaction says so with .deferred().
import { readdirSync, readFileSync, statSync } from 'node:fs';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { projectRoot } from '../src/db/paths';

const root = projectRoot();

function sourceFiles(dir: string): string[] {
  const out: string[] = [];
  for (const name of readdirSync(dir)) {
    const p = path.join(dir, name);
    if (statSync(p).isDirectory()) out.push(...sourceFiles(p));
    else if (/\.(ts|mjs)$/.test(name) && !/\.test\.ts$/.test(name)) out.push(p);
  }
  return out;
}

/** Each `.transaction(` call with how it is begun: immediate, deferred (declared read-only) or default. */
function transactionCalls(text: string): { line: number; begin: 'immediate' | 'deferred' | 'default' }[] {
  const calls: { line: number; begin: 'immediate' | 'deferred' | 'default' }[] = [];
  for (const m of text.matchAll(/\.transaction\(/g)) {
    let i = m.index + m[0].length;
    for (let depth = 1; depth > 0 && i < text.length; i++) {
      const c = text[i];
      if (c === '(' || c === '[' || c === '{') depth++;
      else if (c === ')' || c === ']' || c === '}') depth--;
    }
    const call = text.slice(m.index, i);
    const after = text.slice(i, i + 40).replace(/^\s+/, '');
    // better-sqlite3 transaction functions kept in a variable and begun later: `run.immediate()`.
    const variable = /(?:const|let)\s+(\w+)\s*=\s*[\w.$]*\s*$/.exec(text.slice(Math.max(0, m.index - 120), m.index))?.[1];
    const later = variable ? text.slice(i, i + 4000) : '';
    let begin: 'immediate' | 'deferred' | 'default' = 'default';
    if (/behavior:\s*'immediate'/.test(call.slice(-80)) || after.startsWith('.immediate(') || (variable && new RegExp(`\\b${variable}\\.immediate\\(`).test(later))) begin = 'immediate';
    else if (after.startsWith('.deferred(') || (variable && new RegExp(`\\b${variable}\\.deferred\\(`).test(later))) begin = 'deferred';
    calls.push({ line: text.slice(0, m.index).split('\n').length, begin });
  }
  return calls;
}

describe('write transactions', () => {
  it('the scanner tells the three kinds apart', () => {
    expect(transactionCalls("db.transaction((tx) => { tx.insert(a).run(); }, { behavior: 'immediate' });").map((c) => c.begin)).toEqual(['immediate']);
    expect(transactionCalls('const run = sqlite.transaction(() => 1);\nreturn run.immediate();').map((c) => c.begin)).toEqual(['immediate']);
    expect(transactionCalls('sqlite.transaction(() => 1)\n  .immediate();').map((c) => c.begin)).toEqual(['immediate']);
    expect(transactionCalls('const read = sqlite.transaction(() => 1);\nreturn read.deferred();').map((c) => c.begin)).toEqual(['deferred']);
    expect(transactionCalls('db.transaction((tx) => { tx.insert(a).run(); });').map((c) => c.begin)).toEqual(['default']);
    expect(transactionCalls('sqlite.transaction(() => 1)();').map((c) => c.begin)).toEqual(['default']);
  });

  it('every transaction in src, workers and scripts is begun IMMEDIATE or declared read-only', () => {
    const offenders: string[] = [];
    let immediate = 0;
    for (const file of [...sourceFiles(path.join(root, 'src')), ...sourceFiles(path.join(root, 'workers')), ...sourceFiles(path.join(root, 'scripts'))]) {
      for (const c of transactionCalls(readFileSync(file, 'utf8'))) {
        if (c.begin === 'default') offenders.push(`${path.relative(root, file)}:${c.line}`);
        if (c.begin === 'immediate') immediate++;
      }
    }
    expect(offenders).toEqual([]);
    expect(immediate).toBeGreaterThan(20);
  });
});
