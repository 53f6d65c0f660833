// FITS image headers through the intake (upload → reading job → import) on a real migrated SQLite:
// an empty, undefined or non-numeric magnitude keyword is refused naming the keyword (nothing is
// stored), and an image's pointing never replaces a star's catalogue position; it is kept with the
// measurement as observation metadata. The header is the fixture written by astropy
// (fixtures/fits/image_header.fits, invented target), with cards rewritten in place (80 columns).
import { eq } from 'drizzle-orm';
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { projectRoot } from '../src/db/paths';
import { intakeJobs, measurements, stars } from '../src/db/schema';
import type { Actor } from '../src/server/context';
import { createUpload, getUpload, importUpload, type UploadDetail } from '../src/server/intake/intake';
import { outcomeOf } from '../src/server/intake/jobs';
import { drainIntakeJobs } from '../src/server/intake/run';
import { createTestApp, type TestApp } from './setup/db';
import { makeCampaign, makeUser } from '../src/seed/factories';

let t: TestApp;
let analyst: Actor;
let campaignId: string;

beforeEach(async () => {
  t = createTestApp();
  analyst = await makeUser(t.app);
  campaignId = makeCampaign(t.app, analyst).id;
});
afterEach(() => t.cleanup());

const IMAGE = readFileSync(path.join(projectRoot(), 'fixtures/fits/image_header.fits'));

/** The fixture with the card starting `old` replaced by `card` (padded to 80 columns). */
function withCard(old: string, card: string): Uint8Array {
  const bytes = Buffer.from(IMAGE);
  const at = bytes.indexOf(old);
  expect(at).toBeGreaterThanOrEqual(0);
  expect(at % 80).toBe(0);
  bytes.write(card.padEnd(80, ' '), at, 'latin1');
  return new Uint8Array(bytes);
}

async function send(name: string, bytes: Uint8Array | string) {
  const form = new FormData();
  form.append('file', new Blob([bytes as BlobPart]), name);
  const u = await createUpload(t.app, analyst, campaignId, new Request('http://127.0.0.1/upload', { method: 'POST', body: form }), { dataDir: path.dirname(t.filePath), maxBytes: 5 * 1024 * 1024 });
  await drainIntakeJobs(t.db);
  const j = t.db.select().from(intakeJobs).where(eq(intakeJobs.id, u.job!.id)).get()!;
  const refusal = j.status === 'failed' ? (j.outcome as { refusal: { status: number; error: { code: string; message: string } } }).refusal : null;
  return { refusal, upload: refusal ? null : getUpload(t.db, campaignId, u.id) };
}

async function importImage(u: UploadDetail, starId: string, mag: number) {
  const job = importUpload(t.app, analyst, campaignId, u.id, { rules: { quality: [] }, image: { starId, band: 'V', mag, magErr: 0.03 } });
  await drainIntakeJobs(t.db);
  return outcomeOf(t.db, job.id);
}

describe('magnitude keywords of an image header', () => {
  it.each([
    ["MAG     = ''", "MAG = '' is empty"],
    ["MAG     = 'bright'", "MAG = 'bright' is not a number"],
    ['MAG     =  / measured later', 'MAG has no value'],
  ])('%s: refused naming the keyword; nothing stored', async (card, said) => {
    const r = await send('frame.fits', withCard("QUOTE   = 'O''Brien''s frame'", card));
    expect(r.refusal).toMatchObject({ status: 422, error: { code: 'unreadable_file' } });
    expect(r.refusal!.error.message).toBe(`frame.fits: the header's ${said}, so it cannot be the magnitude measured on the image; correct or remove the keyword and upload the file again`);
    expect(t.db.select().from(measurements).all()).toEqual([]);
  });

  it('an empty magnitude error keyword beside a magnitude is refused the same way', async () => {
    const bytes = withCard("EMPTYSTR= ''", "MAGERR  = ''");
    const both = Buffer.from(bytes);
    both.write('MAG     =                 10.5'.padEnd(80, ' '), both.indexOf("QUOTE   = 'O''Brien''s frame'"), 'latin1');
    const r = await send('frame.fits', new Uint8Array(both));
    expect(r.refusal!.error.message).toBe("frame.fits: the header's MAGERR = '' is empty, so it cannot be the error of the magnitude measured on the image; correct or remove the keyword and upload the file again");
  });

  it('a numeric magnitude keyword is offered as the measured value (control)', async () => {
    const r = await send('frame.fits', withCard("QUOTE   = 'O''Brien''s frame'", 'MAG     =                 10.5 / measured on the image'));
    expect(r.refusal).toBeNull();
    expect(r.upload!.observation).toMatchObject({ mag: 10.5, magKeyword: 'MAG' });
  });
});

describe("an image's pointing and the catalogue position", () => {
  it("keeps the star's catalogue RA/Dec; the pointing stays with the measurement", async () => {
    const csv = await send('catalogue.csv', 'id,ra,dec,V,V_err\nember-7,10.0,20.0,11.2,0.02\n');
    const u = csv.upload!;
    const job = importUpload(t.app, analyst, campaignId, u.id, { mapping: { layout: u.detected!.layout, columns: u.detected!.columns }, rules: u.detected!.rules, source: 'catalogue' });
    await drainIntakeJobs(t.db);
    outcomeOf(t.db, job.id);
    const image = (await send('frame.fits', IMAGE)).upload!;
    // The fixture points at RA 05:35:17.30 (83.822 deg), Dec -05:23:28.0.
    expect(image.observation!.raDeg).toBeCloseTo(83.822083, 5);
    await importImage(image, 'ember-7', 10.9);
    const star = t.db.select().from(stars).where(eq(stars.starKey, 'ember-7')).get()!;
    expect([star.raDeg, star.decDeg]).toEqual([10, 20]);
    const fromImage = t.db.select().from(measurements).where(eq(measurements.source, 'frame.fits')).get()!;
    expect(fromImage.observation).toMatchObject({ image: 'frame.fits' });
    expect((fromImage.observation as { raDeg: number }).raDeg).toBeCloseTo(83.822083, 5);
    expect((fromImage.observation as { decDeg: number }).decDeg).toBeCloseTo(-5.391111, 5);
  });

  it('a star first met in an image gets no catalogue position from the pointing', async () => {
    const image = (await send('frame.fits', IMAGE)).upload!;
    await importImage(image, 'ember-8', 10.9);
    const star = t.db.select().from(stars).where(eq(stars.starKey, 'ember-8')).get()!;
    expect([star.raDeg, star.decDeg]).toEqual([null, null]);
  });
});
