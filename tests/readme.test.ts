// The README is part of the interface: its flag table must list exactly the codes a fit can carry,
// and its quick start must be the two lines CI runs.
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { FLAG_EXPLANATIONS } from '../src/core/fit/flags';
import { projectRoot } from '../src/db/paths';

const readme = readFileSync(path.join(projectRoot(), 'README.md'), 'utf8');

describe('README', () => {
  it('explains every flag code with the words the code uses, and no other code', () => {
    const section = readme.slice(readme.indexOf('## Flags'), readme.indexOf('\n## ', readme.indexOf('## Flags') + 3));
    const listed = [...section.matchAll(/^\| `([a-z0-9_]+)` \| (.+) \|$/gm)].map((m) => [m[1], m[2].replace(/\\\|/g, '|')]);
    expect(Object.fromEntries(listed)).toEqual(FLAG_EXPLANATIONS);
  });

  it('quick start is the install-and-demo line and the line CI runs', () => {
    expect(readme).toContain('npm ci && npm run demo');
    expect(readme).toContain('npm run test:setup && npm test');
    expect(readFileSync(path.join(projectRoot(), '.ci/run'), 'utf8')).toContain('npm run test:setup && npm test');
  });
});
