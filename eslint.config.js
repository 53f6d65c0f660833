// Lint: TypeScript rules, plus the layer order of docs/decisions/0015-one-layer-per-folder.md for .ts,
// .tsx and .astro alike (eslint/layers.js; .astro frontmatter and scripts via eslint/astro-frontmatter.js).
import tseslint from 'typescript-eslint';
import astroFrontmatter from './eslint/astro-frontmatter.js';
import layers from './eslint/layers.js';

const TS = ['**/*.ts', '**/*.tsx', '**/*.mts', '**/*.js', '**/*.mjs'];

export default tseslint.config(
  { ignores: ['src/env.d.ts', 'dist/**', '.astro/**', 'node_modules/**', 'data/**', 'drizzle/**', 'public/**'] },
  ...tseslint.configs.recommended.map((c) => ({ ...c, files: TS })),
  {
    files: TS,
    rules: {
      '@typescript-eslint/no-unused-vars': ['error', { argsIgnorePattern: '^_', varsIgnorePattern: '^_' }],
    },
  },
  {
    files: ['**/*.astro'],
    languageOptions: { parser: astroFrontmatter },
  },
  {
    files: ['**/*.ts', '**/*.tsx', '**/*.astro'],
    plugins: { layers },
    rules: { 'layers/direction': 'error' },
  },
);
