// @ts-check
import { defineConfig } from 'astro/config';
import node from '@astrojs/node';
import react from '@astrojs/react';
import tailwindcss from '@tailwindcss/vite';

// Server output: every page is rendered per request behind the session middleware.
export default defineConfig({
  output: 'server',
  adapter: node({ mode: 'standalone' }),
  integrations: [react()],
  server: { host: '127.0.0.1', port: 4321 },
  // Astro's own same-origin check is off: it refuses every bodiless write without an Origin, bearer
  // tokens included. src/middleware.ts applies the rule instead: a same-origin Origin (or Referer)
  // for every write except bearer-token requests (docs/decisions/0020-same-origin-writes-and-headers.md).
  // The hosts we serve stay listed, for the URL Astro builds from Host and X-Forwarded-Host.
  security: {
    checkOrigin: false,
    allowedDomains: [
      { hostname: 'localhost' },
      { hostname: '127.0.0.1' },
    ],
  },
  vite: {
    plugins: [tailwindcss()],
    // The SQLite files live in data/; watching them makes `astro dev` reload forever.
    server: { watch: { ignored: ['**/data/**', '**/*.db', '**/*.db-wal', '**/*.db-shm'] } },
    ssr: { external: ['better-sqlite3'] },
  },
});
