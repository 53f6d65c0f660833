// What every download reads: the rows of a filtered catalogue, their count and widest strings, and
// the provenance, all inside one read transaction on a connection of its own. The own connection
// matters twice: better-sqlite3 cannot run other statements on a connection while an iterator is
// open (the web server's other requests would fail), and WAL gives the download one consistent
// snapshot however long the client takes to read it.
import Database from 'better-sqlite3';
import { requireBand, type BandLibrary } from '../../core/bands';
import { findLibrary } from '../band-library';
import { catalogueColumns, optionText, PROVENANCE_CONSTANTS, provenanceLines, type CatalogueColumn, type CatalogueRow, type Provenance } from '../../core/catalogue';
import { extrapolatedBandKeys } from '../../core/extinction';
import type { ExtinctionLawKey, ZeroPoint } from '../../core/types';
import type { AppDatabase } from '../../db/client';
import { describeFilter, filterSql, STARS_THEN_RESULTS, type CatalogueFilter } from '../catalogue';
import { appVersion } from '../health';

export interface BatchProvenance {
  id: string;
  startedAt: string;
  bandLibraryVersion: string;
  softwareVersion: string;
  law: string;
  rv: number;
  options: Record<string, unknown>;
  rows: number;
  extrapolatedBands: string[];
}

/** A band's zero-point (the core's shape) with the band it belongs to. */
export interface ZeroPointUsed extends ZeroPoint {
  band: string;
  system: string;
  magnitudeSystem: string;
}

export interface ExportProvenance {
  software: { name: string; version: string };
  createdAt: string;
  campaign: { id: string; name: string };
  selection: string;
  rows: number;
  bandLibraryVersions: string[];
  constants: string;
  batches: BatchProvenance[];
  /** Zero-points of the bands that reached at least one fit in these rows. */
  zeroPoints: ZeroPointUsed[];
  notes: string[];
  /** Set in the files of a frozen release: what to cite. */
  release?: { id: string; title: string; address: string };
}

export interface ExportSource {
  columns: CatalogueColumn[];
  provenance: ExportProvenance;
  /** Provenance as plain lines (CSV '#' lines, FITS COMMENT cards, VOTable description). */
  lines: string[];
  count: number;
  /** Widest value in bytes of each text column (FITS needs fixed widths up front). */
  maxBytes: Record<'id' | 'bands_used' | 'flags' | 'review_status' | 'batch_id' | 'review_mark' | 'lum_class' | 'lum_class_source' | 'model', number>;
  rows(): IterableIterator<CatalogueRow>;
  close(): void;
}

/**
 * Columns the downloads add after the catalogue's own: the batch that made each row's fit (its
 * options and versions are in the provenance under that id) and marks on the live review decision.
 */
export const EXPORT_EXTRA_COLUMNS: CatalogueColumn[] = [
  { name: 'batch_id', description: 'id of the batch that made this fit; its options, band library and software versions are listed in the provenance' },
  { name: 'review_mark', description: 'marks on the review decision, space-separated: four_eyes_off (made while the four-eyes rule was switched off), carried_over (carried over from an earlier fit by a re-fit that agreed within 0.25σ)' },
];

/** The columns of every download, in order. */
export function exportColumns(): CatalogueColumn[] {
  return [...catalogueColumns(true), ...EXPORT_EXTRA_COLUMNS];
}

const REVIEW_MARK_SQL = `coalesce((SELECT trim(CASE WHEN d.four_eyes_off THEN 'four_eyes_off ' ELSE '' END || CASE WHEN d.carried_from_decision_id IS NOT NULL THEN 'carried_over' ELSE '' END)
  FROM review_decisions d WHERE d.fit_result_id = f.id AND d.superseded_at IS NULL ORDER BY d.id DESC LIMIT 1), '')`;

/** Output column ← SQL. The catalogue says 'unreviewed' where the database says 'pending'. */
const SELECT = `s.star_key AS id, s.ra_deg AS ra, s.dec_deg AS dec, f.teff_k, f.teff_err_k, f.teff_err_formal_k, f.teff_lower_k,
  f.theta_mas, f.theta_err_mas, f.radius_rsun, f.radius_err_rsun, f.lum_lsun, f.lum_err_lsun, f.fbol_cgs, f.fbol_err_cgs,
  f.av_mag AS av, f.av_err_mag AS av_err, f.chi2_red, coalesce(f.n_bands, 0) AS n_bands, coalesce(f.bands_used, '') AS bands_used,
  f.ir_excess_sigma, f.flags, f.tbb_k, f.tbb_err_k, f.tbb_err_formal_k, f.tbb_lower_k, f.tbb_chi2_red, f.lum_class, f.lum_class_source, f.feh_dex AS feh,
  CASE WHEN f.photosphere_name IS NULL THEN NULL ELSE f.photosphere_name || ' ' || f.photosphere_version END AS model, CASE f.review_status WHEN 'pending' THEN 'unreviewed' ELSE f.review_status END AS review_status,
  f.batch_id, ${REVIEW_MARK_SQL} AS review_mark`;

// Band library versions are immutable rows in the database (src/server/band-library.ts), so the
// zero-points a fit used can always be listed with it.
function libraryFor(db: AppDatabase, version: string): BandLibrary | null {
  return findLibrary(db, version);
}

/** Opens the rows of a campaign's catalogue under `filter`, ordered by star id. Call close() when done. */
export function openExport(db: AppDatabase, campaign: { id: string; name: string }, filter: CatalogueFilter, now = new Date(), release?: ExportProvenance['release']): ExportSource {
  const file = db.$client.name;
  const conn = new Database(file, { readonly: true, fileMustExist: true });
  let open = true;
  const close = () => {
    if (!open) return;
    open = false;
    if (conn.inTransaction) conn.exec('COMMIT');
    conn.close();
  };
  try {
    conn.pragma('busy_timeout = 5000');
    conn.exec('BEGIN');
    const params: Record<string, string | number> = { campaign: campaign.id };
    const where = ['s.campaign_id = @campaign', 'f.star_id = s.id', 'f.campaign_id = @campaign', 'f.is_current = 1', ...filterSql(filter, params)];
    const from = STARS_THEN_RESULTS;
    // One pass for the count, the widest strings and which batches and band sets the rows come from.
    const groups = conn
      .prepare(
        `SELECT f.batch_id AS batchId, coalesce(f.bands_used, '') AS bands, count(*) AS n, max(length(CAST(s.star_key AS BLOB))) AS idBytes,
           max(length(CAST(coalesce(f.bands_used, '') AS BLOB))) AS bandsBytes, max(length(CAST(f.flags AS BLOB))) AS flagBytes,
           max(length(CAST(coalesce(f.photosphere_name || ' ' || f.photosphere_version, '') AS BLOB))) AS modelBytes
         FROM ${from} WHERE ${where.join(' AND ')} GROUP BY 1, 2`,
      )
      .all(params) as { batchId: string; bands: string; n: number; idBytes: number; bandsBytes: number; flagBytes: number; modelBytes: number }[];
    const count = groups.reduce((a, g) => a + g.n, 0);
    const maxBytes = {
      id: Math.max(1, ...groups.map((g) => g.idBytes)),
      bands_used: Math.max(1, ...groups.map((g) => g.bandsBytes)),
      flags: Math.max(1, ...groups.map((g) => g.flagBytes)),
      review_status: 'unreviewed'.length,
      batch_id: Math.max(1, ...groups.map((g) => Buffer.byteLength(g.batchId))),
      review_mark: 'four_eyes_off carried_over'.length,
      lum_class: 'dwarf'.length,
      lum_class_source: 'parallax'.length,
      model: Math.max(1, ...groups.map((g) => g.modelBytes)),
    };

    const batchRows = new Map<string, number>();
    const bandsByLibrary = new Map<string, Set<string>>();
    const batchInfo = conn.prepare('SELECT id, created_at, band_library_version, software_version, options FROM batches WHERE id = ?');
    const batches: BatchProvenance[] = [];
    for (const g of groups) batchRows.set(g.batchId, (batchRows.get(g.batchId) ?? 0) + g.n);
    for (const [id, rows] of batchRows) {
      const b = batchInfo.get(id) as { id: string; created_at: number; band_library_version: string; software_version: string; options: string };
      const options = JSON.parse(b.options) as Record<string, unknown>;
      const law = String(options.law ?? 'f99');
      const library = libraryFor(db, b.band_library_version);
      const batchBands = new Set<string>();
      for (const g of groups) if (g.batchId === id) for (const k of g.bands.split(' ')) if (k) batchBands.add(k);
      batches.push({
        id,
        startedAt: new Date(b.created_at).toISOString(),
        bandLibraryVersion: b.band_library_version,
        softwareVersion: b.software_version,
        law,
        rv: Number(options.rv ?? 3.1),
        options,
        rows,
        extrapolatedBands: library ? extrapolatedBandKeys(Object.values(library.bands).filter((band) => batchBands.has(band.key)), law as ExtinctionLawKey) : [],
      });
      let used = bandsByLibrary.get(b.band_library_version);
      if (!used) bandsByLibrary.set(b.band_library_version, (used = new Set()));
      for (const k of batchBands) used.add(k);
    }
    batches.sort((a, b) => b.rows - a.rows || a.startedAt.localeCompare(b.startedAt));

    const notes: string[] = [];
    const zeroPoints: ZeroPointUsed[] = [];
    for (const [version, keys] of bandsByLibrary) {
      const library = libraryFor(db, version);
      if (!library) {
        notes.push(`band library ${version} is not part of this software version; its zero-points are listed in the release that made those fits`);
        continue;
      }
      for (const key of [...keys].sort()) {
        const band = requireBand(library, key);
        const zp = band.zeroPoint;
        if (!zp) continue;
        zeroPoints.push({
          band: key,
          system: band.system,
          magnitudeSystem: band.magnitudeSystem,
          ...(zp.fLambdaCgs !== undefined ? { fLambdaCgs: zp.fLambdaCgs } : {}),
          ...(zp.fnuJy !== undefined ? { fnuJy: zp.fnuJy } : {}),
          relErr: zp.relErr,
          ...(zp.catalogueOffsetMag !== undefined ? { catalogueOffsetMag: zp.catalogueOffsetMag } : {}),
          ...(zp.isophotalWavelengthAngstrom !== undefined ? { isophotalWavelengthAngstrom: zp.isophotalWavelengthAngstrom } : {}),
          source: zp.source,
        });
      }
    }

    const columns = exportColumns();
    const provenance: ExportProvenance = {
      software: { name: 'Starkiln', version: appVersion() },
      createdAt: now.toISOString(),
      campaign,
      selection: describeFilter(filter),
      rows: count,
      bandLibraryVersions: [...new Set(batches.map((b) => b.bandLibraryVersion))],
      constants: PROVENANCE_CONSTANTS,
      batches,
      zeroPoints,
      notes,
    };
    if (release) provenance.release = release;
    const lines = provenanceText(provenance, columns);
    if (release) lines.splice(1, 0, `release: ${release.title} (${release.id}), ${release.address}; frozen: these bytes never change`);
    const rowStatement = conn.prepare(`SELECT ${SELECT} FROM ${from} WHERE ${where.join(' AND ')} ORDER BY s.star_key`);
    return {
      columns,
      provenance,
      lines,
      count,
      maxBytes,
      rows: function* () {
        try {
          for (const row of rowStatement.iterate(params)) yield row as CatalogueRow;
        } finally {
          close();
        }
      },
      close,
    };
  } catch (err) {
    close();
    throw err;
  }
}

function zeroPointText(z: ZeroPointUsed): string {
  const value = z.fLambdaCgs !== undefined ? `F_lambda,0 = ${z.fLambdaCgs} erg s-1 cm-2 A-1` : z.fnuJy !== undefined ? `F_nu,0 = ${z.fnuJy} Jy${z.isophotalWavelengthAngstrom ? ` (isophotal at ${z.isophotalWavelengthAngstrom} A)` : ''}` : '';
  const offset = z.catalogueOffsetMag ? `; catalogue offset ${z.catalogueOffsetMag} mag` : '';
  return `zero-point ${z.band} (${z.system}, ${z.magnitudeSystem === 'ab' ? 'AB' : 'Vega'}): ${value}, relative error ${z.relErr}${offset}; source: ${z.source}`;
}

/** The provenance as plain lines: the campaign, the selection, each batch, the zero-points, then the shared lines of src/core/catalogue.ts. */
export function provenanceText(p: ExportProvenance, columns: readonly CatalogueColumn[]): string[] {
  const main = p.batches[0];
  const core: Provenance = {
    software: p.software,
    bandLibraryVersion: p.bandLibraryVersions.join(', ') || '(no rows)',
    law: main?.law ?? '(no rows)',
    rv: main?.rv ?? NaN,
    options: main?.options ?? {},
    createdAt: p.createdAt,
    extrapolatedBands: main?.extrapolatedBands,
    notes: p.notes,
  };
  const lines = [
    `campaign: ${p.campaign.name} (${p.campaign.id})`,
    `selection: ${p.selection}; ${p.rows} rows, one per star (its current fit), ordered by id`,
    ...p.batches.map(
      (b) =>
        `fit batch ${b.id}: started ${b.startedAt}, ${b.rows} rows, software ${b.softwareVersion}, band library ${b.bandLibraryVersion}, extinction law ${b.law}, R_V = ${b.rv}${b.extrapolatedBands.length ? ` (extrapolated in ${b.extrapolatedBands.join(' ')})` : ''}; options: ${Object.entries(b.options)
          .map(([k, v]) => `${k} = ${optionText(v)}`)
          .join('; ')} (the batch_id column names each row's batch)`,
    ),
    ...p.zeroPoints.map(zeroPointText),
  ];
  if (p.batches.length > 1) lines.push(`the rows come from ${p.batches.length} batches; the law and options below are those of the batch with most rows (${main.id})`);
  return [...lines, ...provenanceLines(core, columns)];
}
