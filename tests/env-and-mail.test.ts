// Configuration parsing and the mail transports (outbox, and SMTP chosen by configuration alone).
import { readFileSync } from 'node:fs';
import net from 'node:net';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { DEFAULT_UPLOAD_MAX_BYTES, parseEnv, SETTING_NAMES } from '../src/adapters/env';
import { projectRoot } from '../src/db/paths';
import { createApp } from '../src/app/app';
import { outboxMessages } from '../src/db/schema';
import { createTestDatabase, type TestDatabase } from './setup/db';

let t: TestDatabase | undefined;
afterEach(() => t?.cleanup());

const base = { BETTER_AUTH_SECRET: 'x'.repeat(40) };

describe('parseEnv', () => {
  it('has working defaults and trusts both spellings of the local host', () => {
    const env = parseEnv(base);
    expect(env.mailTransport).toBe('outbox');
    expect(env.baseUrl).toBe('http://127.0.0.1:4321');
    expect(env.trustedOrigins).toEqual(expect.arrayContaining(['http://127.0.0.1:4321', 'http://localhost:4321']));
    expect(env.databasePath).toMatch(/data[/\\]starkiln\.db$/);
  });

  it('treats empty values as unset', () => {
    expect(parseEnv({ ...base, SMTP_URL: '', PUBLIC_ORIGIN: '  ' }).smtpUrl).toBeUndefined();
  });

  it.each([
    [{ MAIL_TRANSPORT: 'smtp' }, /SMTP_URL/],
    [{ MAIL_TRANSPORT: 'pigeon' }, /MAIL_TRANSPORT must be outbox or smtp/],
    [{ BETTER_AUTH_SECRET: 'short' }, /at least 32 characters/],
    [{ BETTER_AUTH_URL: 'not a url' }, /BETTER_AUTH_URL/],
    [{ DEMO_ANALYST_PASSWORD: 'abc' }, /DEMO_ANALYST_PASSWORD: demo passwords need at least 10/],
    [{ UPLOAD_MAX_BYTES: '12MB' }, /UPLOAD_MAX_BYTES: UPLOAD_MAX_BYTES must be a positive whole number of bytes, found "12MB"/],
    [{ UPLOAD_MAX_BYTES: '0' }, /UPLOAD_MAX_BYTES must be a positive whole number/],
    [{ WORKER_PROCESSES: '0' }, /WORKER_PROCESSES: --processes \(or WORKER_PROCESSES\) must be a whole number from 1 to 64, got "0"/],
    [{ STARKILN_QUEUE: 'kafka' }, /STARKILN_QUEUE must be sqlite or redis/],
  ])('rejects %j naming the setting', (over, message) => {
    expect(() => parseEnv({ ...base, ...over })).toThrow(message);
  });

  it('keeps uploads beside the database unless DATA_DIR says otherwise, up to 200 MB unless UPLOAD_MAX_BYTES says otherwise', () => {
    const plain = parseEnv({ ...base, DATABASE_PATH: '/srv/kiln/db/starkiln.db' });
    expect(plain.dataDir).toBe('/srv/kiln/db');
    expect(plain.uploadMaxBytes).toBe(DEFAULT_UPLOAD_MAX_BYTES);
    expect(plain.workerProcesses).toBeUndefined();
    const set = parseEnv({ ...base, DATABASE_PATH: '/srv/kiln/db/starkiln.db', DATA_DIR: '/srv/kiln/files', UPLOAD_MAX_BYTES: ' 1024 ', WORKER_PROCESSES: '3' });
    expect([set.dataDir, set.uploadMaxBytes, set.workerProcesses]).toEqual(['/srv/kiln/files', 1024, 3]);
  });

  it('.env.example lists every setting', () => {
    const example = readFileSync(path.join(projectRoot(), '.env.example'), 'utf8');
    const listed = [...example.matchAll(/^([A-Z_]+)=/gm)].map((m) => m[1]);
    expect([...listed].sort()).toEqual([...SETTING_NAMES].sort());
  });
});

describe('mail transports', () => {
  it('outbox: nodemailer composes, the message is stored and readable', async () => {
    t = createTestDatabase();
    const app = createApp(t.db, parseEnv({ ...base, DATABASE_PATH: t.filePath }));
    await app.mailer.send(t.db, { kind: 'notice', to: 'reader@example.test', subject: 'Hello', text: 'Plain words.' });
    const rows = t.db.select().from(outboxMessages).all();
    expect(rows).toHaveLength(1);
    expect(rows[0]).toMatchObject({ transport: 'outbox', status: 'stored', toAddress: 'reader@example.test', subject: 'Hello', textBody: 'Plain words.' });
    expect(rows[0].messageId).toMatch(/^<.+@.+>$/);
  });

  it('smtp: selected by MAIL_TRANSPORT alone; a refused connection is recorded as failed, not lost', async () => {
    // A port that was just free and is now closed: connecting is refused at once, no network needed.
    const port = await new Promise<number>((resolve) => {
      const s = net.createServer().listen(0, '127.0.0.1', () => {
        const p = (s.address() as net.AddressInfo).port;
        s.close(() => resolve(p));
      });
    });
    t = createTestDatabase();
    const app = createApp(t.db, parseEnv({ ...base, DATABASE_PATH: t.filePath, MAIL_TRANSPORT: 'smtp', SMTP_URL: `smtp://127.0.0.1:${port}` }));
    await app.mailer.send(t.db, { kind: 'notice', to: 'reader@example.test', subject: 'Hello', text: 'Plain words.' });
    const row = t.db.select().from(outboxMessages).get()!;
    expect(row.transport).toBe('smtp');
    expect(row.status).toBe('failed');
    expect(row.error).toMatch(/ECONNREFUSED|connect/i);
  });

  it('smtp: delivers to a listening SMTP server', async () => {
    // A minimal SMTP conversation (RFC 5321) is enough to prove the message really leaves.
    const received: string[] = [];
    const server = net.createServer((sock) => {
      let inData = false;
      sock.write('220 sink ready\r\n');
      sock.on('data', (buf) => {
        for (const line of buf.toString().split('\r\n')) {
          if (inData) {
            received.push(line);
            if (line === '.') {
              inData = false;
              sock.write('250 queued\r\n');
            }
            continue;
          }
          if (!line) continue;
          const cmd = line.slice(0, 4).toUpperCase();
          if (cmd === 'EHLO' || cmd === 'HELO') sock.write('250 sink\r\n');
          else if (cmd === 'DATA') {
            inData = true;
            sock.write('354 go ahead\r\n');
          } else if (cmd === 'QUIT') sock.end('221 bye\r\n');
          else sock.write('250 ok\r\n');
        }
      });
    });
    await new Promise<void>((r) => server.listen(0, '127.0.0.1', () => r()));
    const port = (server.address() as net.AddressInfo).port;
    try {
      t = createTestDatabase();
      const app = createApp(t.db, parseEnv({ ...base, DATABASE_PATH: t.filePath, MAIL_TRANSPORT: 'smtp', SMTP_URL: `smtp://127.0.0.1:${port}` }));
      await app.mailer.send(t.db, { kind: 'notice', to: 'reader@example.test', subject: 'Over the wire', text: 'Plain words.' });
      const row = t.db.select().from(outboxMessages).get()!;
      expect(row.error).toBeNull();
      expect(row.status).toBe('sent');
      expect(received.join('\n')).toContain('Subject: Over the wire');
    } finally {
      server.close();
    }
  });
});
