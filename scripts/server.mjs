// The web server: the built app (dist/server/entry.mjs, the Node adapter's standalone handler:
// static files and pages) behind a node:http listener of our own. The adapter reports the first
// X-Forwarded-For value as the client's address, whoever sent it; this listener tells the app the
// TCP peer's address instead, in the x-starkiln-peer header (a value sent by the client is
// replaced), and the app decides from TRUSTED_PROXIES whether X-Forwarded-For may be believed
// (src/adapters/client-address.ts, docs/decisions/0019-rate-limits-and-client-address.md).
// Started by `npm start`, `npm run demo` and the test harness: HOST and PORT as for the adapter.
import fs from 'node:fs';
import http from 'node:http';
import https from 'node:https';
import path from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const entry = path.join(root, 'dist/server/entry.mjs');
if (!fs.existsSync(entry)) {
  console.error('No build found: run `npm run build` first.');
  process.exit(1);
}

// The adapter would otherwise open its own listener, which passes X-Forwarded-For through unchecked.
process.env.ASTRO_NODE_AUTOSTART = 'disabled';
// Read by the app's middleware: requests arrive through this listener, so x-starkiln-peer is ours.
globalThis[Symbol.for('starkiln.peer-header')] = true;
const { handler } = await import(pathToFileURL(entry).href);

function listener(req, res) {
  req.headers['x-starkiln-peer'] = req.socket.remoteAddress ?? '';
  handler(req, res);
}

const host = process.env.HOST ?? '127.0.0.1';
const port = Number(process.env.PORT ?? 4321);
const server =
  process.env.SERVER_CERT_PATH && process.env.SERVER_KEY_PATH
    ? https.createServer({ key: fs.readFileSync(process.env.SERVER_KEY_PATH), cert: fs.readFileSync(process.env.SERVER_CERT_PATH) }, listener)
    : http.createServer(listener);
server.listen(port, host, () => {
  const address = server.address();
  const shown = typeof address === 'object' && address ? `${address.address}:${address.port}` : String(address);
  console.log(`Starkiln web server listening on ${shown}`);
});
for (const signal of ['SIGINT', 'SIGTERM']) {
  process.on(signal, () => {
    server.close(() => process.exit(0));
    server.closeAllConnections();
    setTimeout(() => process.exit(0), 2000).unref();
  });
}
