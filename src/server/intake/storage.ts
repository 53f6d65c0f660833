// Uploaded files go to disk as they arrive (never whole into memory), under a name the server
// chooses; the browser's file name is kept for display only and its content type is ignored.
import Busboy from 'busboy';
import { createHash } from 'node:crypto';
import { createWriteStream, mkdirSync, rmSync } from 'node:fs';
import path from 'node:path';
import { Readable } from 'node:stream';
import type { ReadableStream as NodeWebStream } from 'node:stream/web';
import { newId } from '../ids';
import { IntakeError } from './errors';

export const DEFAULT_UPLOAD_MAX_BYTES = 200 * 1024 * 1024;

export interface IntakeConfig {
  /** Folder holding uploads/<campaign>/<random>. */
  dataDir: string;
  maxBytes: number;
}

/**
 * DATA_DIR (default: the database's folder) and UPLOAD_MAX_BYTES (default 200 MB), read here
 * because only the intake needs them.
 */
export function intakeConfigFromEnv(databasePath: string, env: Record<string, string | undefined> = process.env): IntakeConfig {
  const raw = env.UPLOAD_MAX_BYTES?.trim();
  const maxBytes = raw ? Number(raw) : DEFAULT_UPLOAD_MAX_BYTES;
  if (!Number.isSafeInteger(maxBytes) || maxBytes <= 0) throw new Error(`UPLOAD_MAX_BYTES must be a positive whole number of bytes, found "${raw}"`);
  const dataDir = env.DATA_DIR?.trim() ? path.resolve(env.DATA_DIR.trim()) : path.dirname(databasePath);
  return { dataDir, maxBytes };
}

export interface StoredFile {
  originalName: string;
  storedPath: string;
  sizeBytes: number;
  sha256: string;
}

/** What a person may see of the name they sent: no folders, no control characters, bounded length. */
export function displayName(name: string | undefined): string {
  const base = (name ?? '').split(/[\\/]/).pop() ?? '';
  const clean = base.replace(/[\u0000-\u001f\u007f]/g, '').trim().slice(0, 200);
  return clean === '' ? 'unnamed file' : clean;
}

export function formatBytes(n: number): string {
  if (n >= 1024 * 1024) return `${(n / (1024 * 1024)).toFixed(n % (1024 * 1024) === 0 ? 0 : 1)} MB`;
  if (n >= 1024) return `${(n / 1024).toFixed(n % 1024 === 0 ? 0 : 1)} kB`;
  return `${n} bytes`;
}

const tooLarge = (config: IntakeConfig) =>
  new IntakeError(413, 'too_large', `The file is larger than the upload limit of ${formatBytes(config.maxBytes)}; nothing was stored.`);

/**
 * Streams the single file of a multipart/form-data request to disk, hashing it on the way.
 * Over the limit: the partial file is deleted and a 413 IntakeError is thrown.
 */
export async function receiveUpload(request: Request, campaignId: string, config: IntakeConfig): Promise<StoredFile> {
  const type = request.headers.get('content-type') ?? '';
  if (!type.toLowerCase().startsWith('multipart/form-data')) {
    throw new IntakeError(400, 'bad_request', 'Send the file as multipart/form-data with one file field.');
  }
  // A declared length far above the limit is refused before reading anything (headroom for the form's own bytes).
  const declared = Number(request.headers.get('content-length') ?? NaN);
  if (Number.isFinite(declared) && declared > config.maxBytes + 64 * 1024) throw tooLarge(config);
  if (!request.body) throw new IntakeError(400, 'bad_request', 'The request has no body.');

  const dir = path.join(config.dataDir, 'uploads', campaignId);
  mkdirSync(dir, { recursive: true });
  const storedPath = path.join(dir, newId(20));

  return new Promise<StoredFile>((resolve, reject) => {
    let busboy: Busboy.Busboy;
    try {
      busboy = Busboy({ headers: { 'content-type': type }, limits: { files: 1, fileSize: config.maxBytes, fields: 20, fieldSize: 64 * 1024 } });
    } catch (err) {
      reject(new IntakeError(400, 'bad_request', `The multipart body cannot be read: ${(err as Error).message}`));
      return;
    }
    let settled = false;
    let sawFile = false;
    let writeDone: Promise<StoredFile> | null = null;
    const fail = (err: unknown) => {
      if (settled) return;
      settled = true;
      rmSync(storedPath, { force: true });
      reject(err);
    };
    busboy.on('file', (_field, stream, info) => {
      if (sawFile) {
        stream.resume();
        return;
      }
      sawFile = true;
      const hash = createHash('sha256');
      let size = 0;
      let truncated = false;
      const out = createWriteStream(storedPath, { flags: 'wx', mode: 0o600 });
      stream.on('data', (chunk: Buffer) => {
        size += chunk.length;
        hash.update(chunk);
      });
      stream.on('limit', () => {
        truncated = true;
        out.destroy();
        fail(tooLarge(config));
      });
      writeDone = new Promise<StoredFile>((res, rej) => {
        out.on('error', rej);
        out.on('finish', () => {
          if (truncated) return;
          res({ originalName: displayName(info.filename), storedPath, sizeBytes: size, sha256: hash.digest('hex') });
        });
      });
      writeDone.catch(fail);
      stream.pipe(out);
    });
    busboy.on('filesLimit', () => undefined);
    busboy.on('error', (err) => fail(new IntakeError(400, 'bad_request', `The upload was cut off or is not valid multipart data (${(err as Error).message}); nothing was stored.`)));
    busboy.on('close', () => {
      if (settled) return;
      if (!sawFile || !writeDone) {
        fail(new IntakeError(400, 'bad_request', 'The request holds no file. Choose a file to upload.'));
        return;
      }
      writeDone.then((f) => {
        if (settled) return;
        settled = true;
        resolve(f);
      }, fail);
    });
    const body = Readable.fromWeb(request.body as unknown as NodeWebStream<Uint8Array>);
    body.on('error', (err) => fail(new IntakeError(400, 'bad_request', `The upload was interrupted (${err.message}); nothing was stored.`)));
    body.pipe(busboy);
  });
}
