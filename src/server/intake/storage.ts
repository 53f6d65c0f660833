// Uploaded files go to disk as they arrive (never whole into memory), under a name the server
// chooses; the browser's file name is kept for display only and its content type is ignored.
import Busboy from 'busboy';
import { createHash } from 'node:crypto';
import { createWriteStream, mkdirSync, readdirSync, renameSync, rmSync, statSync } from 'node:fs';
import path from 'node:path';
import { Readable } from 'node:stream';
import type { ReadableStream as NodeWebStream } from 'node:stream/web';
import type { AppEnv } from '../../adapters/env';
import { newId } from '../ids';
import { IntakeError } from './errors';

export interface IntakeConfig {
  /** Folder holding uploads/<campaign>/<random>. */
  dataDir: string;
  maxBytes: number;
}

/** DATA_DIR and UPLOAD_MAX_BYTES from the settings (src/adapters/env.ts). */
export function intakeConfigOf(env: Pick<AppEnv, 'dataDir' | 'uploadMaxBytes'>): IntakeConfig {
  return { dataDir: env.dataDir, maxBytes: env.uploadMaxBytes };
}

/** Prefix of an upload still arriving; it gets its final name only once complete (see removeLeftoverPartials). */
export const PARTIAL_PREFIX = '.partial-';

/** When this process started, in milliseconds since the epoch. */
export function processStartedAt(): number {
  return Date.now() - process.uptime() * 1000;
}

/**
 * A worker may start while the web server receives an upload; a file still arriving is written to
 * at least every few minutes (Node ends a request that sends nothing for 5 minutes), so a partial
 * file untouched for this long is a leftover.
 */
export const PARTIAL_IDLE_MS = 15 * 60 * 1000;

/**
 * Removes partial uploads (files named PARTIAL_PREFIX…) last written before `before` (ms since the
 * epoch) from every campaign folder under `dataDir/uploads`: what a killed upload or a crash left
 * behind. The server calls it at start-up with its own start time (it is the only process writing
 * uploads); a worker with the earlier of its start and PARTIAL_IDLE_MS ago. Returns the files removed.
 */
export function removeLeftoverPartials(dataDir: string, before: number): string[] {
  const removed: string[] = [];
  for (const { dir, name } of uploadFolderFiles(dataDir)) {
    if (!name.startsWith(PARTIAL_PREFIX)) continue;
    const file = path.join(dir, name);
    try {
      if (statSync(file).mtimeMs >= before) continue;
      rmSync(file, { force: true });
      removed.push(file);
    } catch {
      // gone meanwhile (renamed into place or removed by another process)
    }
  }
  return removed;
}

/** Every file name in the campaign folders under `dataDir/uploads` (none when there are no uploads yet). */
export function* uploadFolderFiles(dataDir: string): Generator<{ dir: string; name: string }> {
  const root = path.join(dataDir, 'uploads');
  let campaigns: string[];
  try {
    campaigns = readdirSync(root);
  } catch {
    return; // no uploads yet
  }
  for (const campaign of campaigns) {
    const dir = path.join(root, campaign);
    let names: string[];
    try {
      names = readdirSync(dir);
    } catch {
      continue; // not a folder
    }
    for (const name of names) yield { dir, name };
  }
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
  const name = newId(20);
  const storedPath = path.join(dir, name);
  // Written under a temporary name and renamed once complete, so a killed upload never leaves a
  // file that looks finished (the start-up clean-up removes what is left under this name).
  const partialPath = path.join(dir, PARTIAL_PREFIX + name);

  return new Promise<StoredFile>((resolve, reject) => {
    let busboy: Busboy.Busboy;
    try {
      // defParamCharset: file names in Content-Disposition are UTF-8 as browsers send them (busboy's
      // default, latin1, turns "étoiles" into "Ã©toiles").
      busboy = Busboy({ headers: { 'content-type': type }, defParamCharset: 'utf8', limits: { files: 1, fileSize: config.maxBytes, fields: 20, fieldSize: 64 * 1024 } });
    } catch (err) {
      reject(new IntakeError(400, 'bad_request', `The multipart body cannot be read: ${(err as Error).message}`));
      return;
    }
    let settled = false;
    let sawFile = false;
    let writeDone: Promise<StoredFile> | null = null;
    let out: ReturnType<typeof createWriteStream> | null = null;
    const fail = (err: unknown) => {
      if (settled) return;
      settled = true;
      // The write stream opens its file asynchronously: destroyed before that, it still creates the
      // file, then closes it. Remove it once closed too, or a cut upload could leave its partial file.
      if (out && !out.closed) out.once('close', () => rmSync(partialPath, { force: true }));
      out?.destroy();
      rmSync(partialPath, { force: true });
      rmSync(storedPath, { force: true });
      reject(err);
    };
    const cutOff = (err: Error) =>
      fail(new IntakeError(400, 'bad_request', `The upload was cut off or is not valid multipart data (${err.message}); nothing was stored.`));
    busboy.on('file', (_field, stream, info) => {
      if (sawFile) {
        stream.resume();
        return;
      }
      sawFile = true;
      const hash = createHash('sha256');
      let size = 0;
      let truncated = false;
      const file = createWriteStream(partialPath, { flags: 'wx', mode: 0o600 });
      out = file;
      // A body that ends before its closing boundary makes busboy fail the file stream ("Unexpected
      // end of form"); without this handler that error event would end the whole server process.
      stream.on('error', cutOff);
      stream.on('data', (chunk: Buffer) => {
        size += chunk.length;
        hash.update(chunk);
      });
      stream.on('limit', () => {
        truncated = true;
        fail(tooLarge(config));
      });
      writeDone = new Promise<StoredFile>((res, rej) => {
        file.on('error', rej);
        file.on('finish', () => {
          if (truncated || settled) return;
          try {
            renameSync(partialPath, storedPath);
          } catch (err) {
            rej(err);
            return;
          }
          res({ originalName: displayName(info.filename), storedPath, sizeBytes: size, sha256: hash.digest('hex') });
        });
      });
      writeDone.catch(fail);
      stream.pipe(file);
    });
    busboy.on('filesLimit', () => undefined);
    busboy.on('error', (err) => cutOff(err as Error));
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
