// Lint: TypeScript rules plus the dependency direction core <- db <- server <- (pages, api, cli, workers).
import tseslint from 'typescript-eslint';

const noFrameworkInCore = {
  patterns: [
    { group: ['astro', 'astro:*', 'react', 'react-dom', 'node:*', 'fs', 'path', 'better-sqlite3', 'drizzle-orm', 'drizzle-orm/*'], message: 'src/core is pure: no framework, Node or database imports.' },
    { group: ['**/db/**', '**/server/**', '**/lib/**', '**/pages/**', '**/components/**'], message: 'src/core depends on nothing else in the app.' },
  ],
};

export default tseslint.config(
  { ignores: ['src/env.d.ts', 'dist/**', '.astro/**', 'node_modules/**', 'data/**', 'drizzle/**', 'public/**', '**/*.astro'] },
  ...tseslint.configs.recommended,
  {
    rules: {
      '@typescript-eslint/no-unused-vars': ['error', { argsIgnorePattern: '^_', varsIgnorePattern: '^_' }],
    },
  },
  {
    files: ['src/core/**/*.ts'],
    ignores: ['src/core/**/*.test.ts'],
    rules: { 'no-restricted-imports': ['error', noFrameworkInCore] },
  },
  {
    files: ['src/db/**/*.ts', 'src/server/**/*.ts'],
    rules: {
      'no-restricted-imports': ['error', { patterns: [{ group: ['astro:*'], message: 'db and server code is shared with the CLI and worker: no astro:* imports.' }, { group: ['**/pages/**', '**/components/**'], message: 'Wrong dependency direction.' }] }],
    },
  },
  {
    files: ['src/components/islands/**/*.{ts,tsx}'],
    rules: {
      'no-restricted-imports': ['error', { patterns: [{ group: ['**/db/**', '**/server/**', 'better-sqlite3', 'drizzle-orm'], message: 'Islands run in the browser: import core and client libs only.' }] }],
    },
  },
);
