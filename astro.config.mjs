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
  // Behind the Node adapter Astro sees its own URL as http://localhost/; list the hosts we serve
  // so its same-origin check accepts multipart and form posts.
  security: {
    checkOrigin: true,
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
