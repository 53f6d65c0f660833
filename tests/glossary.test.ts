// docs/glossary.md says what each public name means; this keeps it complete: every flag code, review
// reason, setting, CLI option, API route and catalogue column of the code appears there as `code`.
import { readdirSync, readFileSync, statSync } from 'node:fs';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { SETTING_NAMES } from '../src/adapters/env';
import { HELP } from '../src/cli/args';
import { REVIEW_REASONS } from '../src/contracts/review-reasons';
import { CATALOGUE_COLUMNS, REVIEW_STATUS_COLUMN } from '../src/core/catalogue';
import { FLAG_EXPLANATIONS } from '../src/core/fit/flags';
import { projectRoot } from '../src/db/paths';

const root = projectRoot();
const glossary = readFileSync(path.join(root, 'docs/glossary.md'), 'utf8');
const quoted = new Set([...glossary.matchAll(/`([^`]+)`/g)].map((m) => m[1]));

function routeFiles(dir: string): string[] {
  return readdirSync(dir).flatMap((n) => {
    const p = path.join(dir, n);
    return statSync(p).isDirectory() ? routeFiles(p) : [p];
  });
}

describe('docs/glossary.md', () => {
  it('explains every flag code with the words the code uses', () => {
    for (const [code, text] of Object.entries(FLAG_EXPLANATIONS)) expect(glossary, code).toContain(`| \`${code}\` | ${text.replace(/\|/g, '\\|')} |`);
  });

  it('lists every review reason, setting and catalogue column', () => {
    for (const r of REVIEW_REASONS) expect(glossary, r.code).toContain(`| \`${r.code}\` | ${r.label} |`);
    for (const name of SETTING_NAMES) expect(glossary, name).toContain(`\`${name}\``);
    for (const c of [...CATALOGUE_COLUMNS, REVIEW_STATUS_COLUMN]) expect(glossary, c.name).toContain(`\`${c.name}\``);
  });

  it('lists every option of starkiln fit', () => {
    const options = [...HELP.matchAll(/^\s+(?:-[a-z], )?(--[a-z-]+)/gm)].map((m) => m[1]);
    expect(options.length).toBeGreaterThan(15);
    for (const o of options) expect(glossary, o).toMatch(new RegExp(`\`${o}[\` ]`));
  });

  it('lists every API route', () => {
    const api = path.join(root, 'src/pages/api');
    const routes = routeFiles(api)
      .map((file) => path.relative(api, file).split(path.sep).join('/').replace(/\.ts$/, '').replace(/(^|\/)index$/, ''))
      .filter((rel) => rel !== '[...rest]' && !rel.startsWith('auth/'))
      .map((rel) => `/api/${rel}`.replace(/\[([a-zA-Z]+)\]/g, ':$1'));
    expect(routes.length).toBeGreaterThan(40);
    for (const route of routes) expect([...quoted].some((q) => q.endsWith(` ${route}`)), route).toBe(true);
    expect(quoted).toContain('/api/auth/*');
  });
});
