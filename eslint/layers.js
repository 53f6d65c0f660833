// Lint rule `layers/direction`: which folder may import which (docs/decisions/0015-one-layer-per-folder.md).
// Every import of a .ts, .tsx or .astro file is resolved to the folder it lands in (relative paths and
// the package.json `imports` aliases alike) and checked against the table below; packages are checked
// against each layer's forbidden list. Tests, benchmarks and scripts may import anything.
import { readFileSync } from 'node:fs';
import path from 'node:path';

/** Layers from the bottom up: folder prefixes (relative to the project root) and what each may import. */
export const LAYERS = {
  core: { folders: ['src/core/'], may: [] },
  contracts: { folders: ['src/contracts/'], may: ['core'], typeOnly: ['core'] },
  db: { folders: ['src/db/'], may: ['core', 'contracts'] },
  adapters: { folders: ['src/adapters/'], may: ['db', 'core', 'contracts'] },
  server: { folders: ['src/server/'], may: ['adapters', 'db', 'core', 'contracts'] },
  app: { folders: ['src/app/'], may: ['server', 'adapters', 'db', 'core', 'contracts'] },
  web: { folders: ['src/web/'], may: ['app', 'server', 'adapters', 'core', 'contracts'] },
  browser: { folders: ['src/browser/'], may: ['core', 'contracts'] },
  components: { folders: ['src/components/'], may: ['browser', 'core', 'contracts'] },
  pages: { folders: ['src/pages/', 'src/layouts/', 'src/middleware.ts'], may: ['components', 'web', 'app', 'server', 'adapters', 'core', 'contracts', 'browser'] },
  cli: { folders: ['src/cli/'], may: ['core', 'contracts'] },
  workers: { folders: ['workers/'], may: ['app', 'server', 'adapters', 'db', 'core', 'contracts'] },
  seed: { folders: ['src/seed/'], may: ['workers', 'app', 'server', 'adapters', 'db', 'core', 'contracts'] },
  // Not product code: may import anything, and nothing in the product may import them.
  tests: { folders: ['tests/', 'bench/', 'scripts/'], may: null },
};

const NODE = ['node:*', 'fs', 'path', 'os', 'crypto', 'child_process', 'worker_threads'];
const DATABASE = ['better-sqlite3', 'drizzle-orm', 'drizzle-orm/*'];
const FRAMEWORK = ['astro', 'astro:*', 'react', 'react-dom', 'react/*', 'react-dom/*'];
/** Packages a layer may not import (the browser layers: nothing that runs only on the server). */
const FORBIDDEN_PACKAGES = {
  core: [...NODE, ...DATABASE, ...FRAMEWORK, 'better-auth', 'better-auth/*', 'nodemailer', 'zod'],
  contracts: ['*'],
  db: ['astro:*', ...FRAMEWORK],
  adapters: ['astro:*', ...FRAMEWORK],
  server: ['astro:*', ...FRAMEWORK],
  app: ['astro:*', ...FRAMEWORK],
  browser: [...NODE, ...DATABASE, 'better-auth', 'nodemailer', 'astro:*'],
  components: [...NODE, ...DATABASE, 'better-auth', 'nodemailer', 'astro:*'],
  workers: ['astro:*', ...FRAMEWORK],
  cli: ['astro:*', ...FRAMEWORK, ...DATABASE],
};

const matches = (name, pattern) => (pattern === '*' ? true : pattern.endsWith('*') ? name.startsWith(pattern.slice(0, -1)) : name === pattern);

function layerOf(rel) {
  if (/\.test\.tsx?$/.test(rel)) return 'tests';
  for (const [name, l] of Object.entries(LAYERS)) if (l.folders.some((f) => rel === f || rel.startsWith(f))) return name;
  return null;
}

let aliases;
function resolveAlias(root, spec) {
  aliases ??= JSON.parse(readFileSync(path.join(root, 'package.json'), 'utf8')).imports ?? {};
  if (aliases[spec]) return path.join(root, aliases[spec]);
  for (const [key, target] of Object.entries(aliases)) {
    if (key.endsWith('*') && spec.startsWith(key.slice(0, -1))) return path.join(root, target.replace('*', spec.slice(key.length - 1)));
  }
  return null;
}

export const direction = {
  meta: { type: 'problem', docs: { description: 'Imports follow the layer order of docs/decisions/0015' }, schema: [] },
  create(context) {
    const root = context.cwd;
    const file = path.relative(root, context.filename).split(path.sep).join('/');
    const from = layerOf(file);
    if (!from || LAYERS[from].may === null) return {};
    const check = (node, spec, typeOnly) => {
      if (typeof spec !== 'string') return;
      let target = null;
      if (spec.startsWith('.')) target = path.resolve(path.dirname(context.filename), spec);
      else if (spec.startsWith('#')) target = resolveAlias(root, spec);
      if (target === null) {
        const bad = (FORBIDDEN_PACKAGES[from] ?? []).find((p) => matches(spec, p));
        if (bad) context.report({ node, message: `${file} is in the ${from} layer, which may not import the package "${spec}" (docs/decisions/0015).` });
        return;
      }
      const rel = path.relative(root, target).split(path.sep).join('/');
      const to = layerOf(rel);
      if (to === from || to === null) return;
      const layer = LAYERS[from];
      if (!layer.may.includes(to)) {
        context.report({ node, message: `${file} (${from}) may not import ${rel} (${to}); ${from} may import ${layer.may.join(', ') || 'nothing outside itself'} (docs/decisions/0015).` });
      } else if (layer.typeOnly?.includes(to) && !typeOnly) {
        context.report({ node, message: `${file} (${from}) may import only types from ${to}: write "import type" (docs/decisions/0015).` });
      }
    };
    const isTypeOnly = (node) => node.importKind === 'type' || node.exportKind === 'type' || (node.specifiers?.length > 0 && node.specifiers.every((s) => s.importKind === 'type' || s.exportKind === 'type'));
    return {
      ImportDeclaration: (node) => check(node, node.source.value, isTypeOnly(node)),
      ExportNamedDeclaration: (node) => node.source && check(node, node.source.value, isTypeOnly(node)),
      ExportAllDeclaration: (node) => check(node, node.source.value, node.exportKind === 'type'),
      ImportExpression: (node) => node.source.type === 'Literal' && check(node, node.source.value, false),
    };
  },
};

export default { rules: { direction } };
