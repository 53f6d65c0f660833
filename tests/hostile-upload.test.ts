// Hostile multipart uploads through the real upload route, served by a real node:http server in this
// process the way the Node adapter serves it (the request body streamed into a web Request). A body
// cut before its closing boundary used to end the whole process with an unhandled error event.
import { count } from 'drizzle-orm';
import type { APIContext } from 'astro';
import { existsSync, readdirSync } from 'node:fs';
import http from 'node:http';
import net from 'node:net';
import path from 'node:path';
import { Readable } from 'node:stream';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { uploads } from '../src/db/schema';
import { POST as postUpload } from '../src/pages/api/campaigns/[id]/uploads/index';
import type { Actor } from '../src/server/context';
import { createTestApp, type TestApp } from './setup/db';
import { makeCampaign, makeUser } from '../src/seed/factories';

let t: TestApp;
let analyst: Actor;
let campaignId: string;
let server: http.Server;
let port: number;
const uncaught: unknown[] = [];
const onUncaught = (err: unknown) => uncaught.push(err);

beforeEach(async () => {
  t = createTestApp();
  analyst = await makeUser(t.app);
  campaignId = makeCampaign(t.app, analyst).id;
  process.on('uncaughtException', onUncaught);
  server = http.createServer((req, res) => {
    const request = new Request(`http://127.0.0.1${req.url}`, {
      method: req.method,
      headers: req.headers as Record<string, string>,
      body: Readable.toWeb(req) as unknown as ReadableStream,
      duplex: 'half',
    } as RequestInit);
    const ctx = { locals: { app: t.app, actor: analyst }, params: { id: campaignId }, request } as unknown as APIContext;
    Promise.resolve(postUpload(ctx)).then(
      async (response) => {
        const text = await response.text();
        res.writeHead(response.status, { 'content-type': 'application/json', 'content-length': Buffer.byteLength(text) });
        res.end(text);
      },
      (err) => {
        const text = String(err);
        res.writeHead(500, { 'content-length': Buffer.byteLength(text) });
        res.end(text);
      },
    );
  });
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
  port = (server.address() as net.AddressInfo).port;
});

afterEach(async () => {
  process.off('uncaughtException', onUncaught);
  await new Promise<void>((resolve) => server.close(() => resolve()));
  t.cleanup();
});

/** Sends raw bytes as one POST and returns the status line's code and the body. */
function rawPost(body: Buffer, boundary: string, extraHeaders = ''): Promise<{ status: number; body: string }> {
  return new Promise((resolve, reject) => {
    const socket = net.connect(port, '127.0.0.1');
    let received = '';
    socket.on('data', (d) => (received += d.toString('utf8')));
    socket.on('error', reject);
    socket.on('close', () => {
      const status = Number(/^HTTP\/1\.1 (\d+)/.exec(received)?.[1] ?? 0);
      resolve({ status, body: received.slice(received.indexOf('\r\n\r\n') + 4) });
    });
    socket.write(
      `POST /upload HTTP/1.1\r\nHost: 127.0.0.1\r\nConnection: close\r\nContent-Type: multipart/form-data; boundary=${boundary}\r\nContent-Length: ${body.length}\r\n${extraHeaders}\r\n`,
    );
    // Not end(): a half-closed client socket makes the server drop the request before it answers.
    socket.write(body);
  });
}

function part(boundary: string, filename: string, content: string): string {
  return `--${boundary}\r\nContent-Disposition: form-data; name="file"; filename="${filename}"\r\nContent-Type: text/csv\r\n\r\n${content}`;
}

const uploadDir = () => path.join(path.dirname(t.filePath), 'uploads', campaignId);
const filesLeft = () => (existsSync(uploadDir()) ? readdirSync(uploadDir()) : []);

describe('a multipart body cut before its closing boundary', () => {
  it('answers 400 naming the problem, keeps the process alive and leaves no file', async () => {
    const boundary = 'starkilnBoundary7MA4YWxk';
    // The file's part starts and carries data, but the body ends without "--boundary--".
    const body = Buffer.from(part(boundary, 'cut.csv', 'id,V,V_err\nember-01,9.1,0.02\n'.repeat(2000)));
    const r = await rawPost(body, boundary);
    expect(r.status).toBe(400);
    expect(JSON.parse(r.body)).toMatchObject({ error: { code: 'bad_request', message: expect.stringMatching(/cut off or is not valid multipart data \(Unexpected end of form\)/) } });
    expect(uncaught).toEqual([]);
    for (let i = 0; i < 100 && filesLeft().length > 0; i++) await new Promise((r) => setTimeout(r, 50)); // removal is asynchronous after the answer
    expect(filesLeft()).toEqual([]);
    expect(t.db.select({ n: count() }).from(uploads).get()!.n).toBe(0);

    // The same server still takes a whole upload afterwards.
    const whole = Buffer.from(`${part(boundary, 'whole.csv', 'id,V,V_err\nember-01,9.1,0.02\n')}\r\n--${boundary}--\r\n`);
    const ok = await rawPost(whole, boundary);
    expect(ok.status).toBe(201);
    expect(filesLeft()).toHaveLength(1);
    expect(filesLeft()[0]).not.toMatch(/^\.partial-/);
  });

  it('a body cut inside the part headers answers 400 too', async () => {
    const boundary = 'b0undary';
    const r = await rawPost(Buffer.from(`--${boundary}\r\nContent-Disposition: form-data; name="file"; filena`), boundary);
    expect(r.status).toBe(400);
    expect(uncaught).toEqual([]);
    expect(filesLeft()).toEqual([]);
  });
});

describe('file names', () => {
  it('a UTF-8 file name is kept as sent (busboy would read it as latin1 by default)', async () => {
    const boundary = 'utf8boundary';
    const name = 'étoiles-Ångström.csv';
    const body = Buffer.concat([Buffer.from(part(boundary, name, 'id,V,V_err\nember-01,9.1,0.02\n'), 'utf8'), Buffer.from(`\r\n--${boundary}--\r\n`)]);
    const r = await rawPost(body, boundary);
    expect(r.status).toBe(201);
    expect(JSON.parse(r.body).upload.originalName).toBe(name);
  });
});
