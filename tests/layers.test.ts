// The layer rule (eslint/layers.js, docs/decisions/0015) refuses imports against the layer order in
// .ts, .tsx and .astro files alike, and lets the allowed ones through.
import { ESLint } from 'eslint';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { projectRoot } from '../src/db/paths';

const eslint = new ESLint({ cwd: projectRoot() });
async function layerErrors(file: string, text: string): Promise<string[]> {
  const [result] = await eslint.lintText(text, { filePath: path.join(projectRoot(), file) });
  return result.messages.filter((m) => m.ruleId === 'layers/direction').map((m) => m.message);
}

describe('layer rule', () => {
  it('refuses a browser island importing use cases or the database driver', async () => {
    const errors = await layerErrors('src/components/islands/Probe.tsx', "import { cataloguePage } from '#server/catalogue';\nimport Database from 'better-sqlite3';\nexport const a = [cataloguePage, Database];\n");
    expect(errors).toHaveLength(2);
    expect(errors[0]).toContain('may not import src/server/catalogue.ts (server)');
  });

  it('refuses a page importing the database, in the frontmatter and in a script', async () => {
    const text = "---\nimport { user } from '../db/schema';\nconst u = user;\n---\n<p>{String(u)}</p>\n<script>\nimport { getDb } from '../db/client';\nconsole.log(getDb);\n</script>\n";
    const errors = await layerErrors('src/pages/probe.astro', text);
    expect(errors).toHaveLength(2);
    expect(errors.every((e) => e.includes('(db)'))).toBe(true);
  });

  it('refuses product code importing tests, and contracts importing a package or core values', async () => {
    expect(await layerErrors('src/seed/probe.ts', "import { x } from '../../tests/factories-photometry';\nexport const c = x;\n")).toHaveLength(1);
    const contracts = await layerErrors('src/contracts/probe.ts', "import { z } from 'zod';\nimport { FLAG_EXPLANATIONS } from '../core/fit';\nimport type { FitResult } from '../core/fit';\nexport const b: [unknown, unknown, FitResult | null] = [z, FLAG_EXPLANATIONS, null];\n");
    expect(contracts).toHaveLength(2);
  });

  it('lets the allowed directions through', async () => {
    expect(await layerErrors('src/pages/probe.astro', "---\nimport { requireUser } from '#web/guards';\nimport { listCampaigns } from '../server/campaigns';\nrequireUser(Astro.locals);\nconsole.log(listCampaigns);\n---\n<p></p>\n")).toEqual([]);
    expect(await layerErrors('src/server/probe.ts', "import { planckLambdaCgsAngstrom } from '#core/planck';\nimport type { Mailer } from '../adapters/mail';\nexport const d: [unknown, Mailer | null] = [planckLambdaCgsAngstrom, null];\n")).toEqual([]);
  });
});
