// One star on one page: its measurements (with the upload each came from), the newest fit with every
// band's observed and model flux and residual, the fitted curve sampled for the plot, earlier fits,
// and the review history. Pages, the JSON API and the review desk all read this.
import { getBand } from '../core/bands';
import { extinctionFunction } from '../core/extinction';
import { dilutionFromThetaMas } from '../core/fit/derived';
import type { FitOptions } from '../core/fit';
import { applyFloor } from '../core/photometry';
import { planckLambdaCgsAngstrom } from '../core/planck';
import type { ExtinctionLawKey } from '../core/types';
import type { AppDatabase } from '../db/client';
import type { SheetBand, SheetFit, SheetMeasurement, StarSheet } from '../contracts/review';
import { findLibrary, getCurrentLibrary } from './band-library';
import { SET_ASIDE_REASON, type FitResultRow } from './fit-job';
import { HttpError } from './errors';
import { carryoverOf, explainFlags, getReviewSettings, starHistory } from './review';

export type { SheetBand, SheetFit, SheetMeasurement, StarSheet } from '../contracts/review';

/** Why a band did not count in the fit, in plain words. */
export const EXCLUSION_LABELS: Record<string, string> = {
  excluded_by_option: 'left out by the batch options',
  long_wavelength: 'beyond ~5 µm: an excess check, not a fit input',
  clipped: 'dropped by clipping (worst band)',
  rejected: 'rejected as inconsistent with the other bands',
  no_valid_error: 'no usable error, so it cannot be weighted',
  // The input rules' reasons (src/core/input/survey-rules.ts), for values left out at import.
  quality_letter: 'left out by its quality letter',
  saturated: 'saturated: brighter than the survey\'s bright limit',
  catalogue_flag: 'left out by the catalogue\'s contamination or extended-source flag',
  bp_rp_excess: 'left out for a large BP/RP flux excess',
};

export const OUTLIER_SIGMA = 3;

/** A stored fit as the sheet reads it: the written row plus its id, review status and batch. */
interface FitRow extends Omit<FitResultRow, 'campaign_id' | 'star_id' | 'detail'> {
  id: number;
  created_at: number;
  review_status: string;
  detail: string | null;
  batch_created_at: number;
  started_by_id: string | null;
  started_by_name: string | null;
}

interface FitDetail {
  chi2?: number;
  avFitted?: boolean;
  residualsSigma?: Record<string, number>;
  modelFluxesCgs?: Record<string, number>;
  observed?: Record<string, { fluxCgs: number; errCgs: number; upperLimit: boolean }>;
  excluded?: { band: string; reason: string; detail?: string }[];
  skipped?: { band: string; source: string; reason: string }[];
  options?: Partial<FitOptions>;
  /** The Planck fit's own θ and A_V (fits made with a photosphere model since 0.2). */
  planckFit?: { thetaMas: number | null; avMag: number | null };
}

/** The star by numeric id or by its key in the campaign; 404 when it is not in this campaign. */
function findStar(db: AppDatabase, campaignId: string, starRef: string | number) {
  const sqlite = db.$client;
  type Row = { id: number; star_key: string; ra_deg: number | null; dec_deg: number | null; parallax_mas: number | null; parallax_err_mas: number | null; av_mag: number | null };
  const cols = 'id, star_key, ra_deg, dec_deg, parallax_mas, parallax_err_mas, av_mag';
  let row: Row | undefined;
  const asNumber = typeof starRef === 'number' ? starRef : /^\d+$/.test(starRef) ? Number(starRef) : NaN;
  if (Number.isSafeInteger(asNumber)) row = sqlite.prepare(`SELECT ${cols} FROM stars WHERE campaign_id = ? AND id = ?`).get(campaignId, asNumber) as Row | undefined;
  if (!row && typeof starRef === 'string') row = sqlite.prepare(`SELECT ${cols} FROM stars WHERE campaign_id = ? AND star_key = ?`).get(campaignId, starRef) as Row | undefined;
  if (!row) throw new HttpError('not_found', 'No star with that id in this campaign.');
  return row;
}

const CURVE_MIN_UM = 0.1;
const CURVE_MAX_UM = 30;
const CURVE_POINTS = 300;

/**
 * λF_λ of the fitted model over 0.1–30 µm: F_λ = s · π B_λ(T) · 10^(−0.4 A_V k(λ)) (docs/science.md 1, 4)
 * with s = (θ/2)². Drawn for the eye; the fit itself compares band means, never this curve.
 */
export function sampleCurve(teffK: number, thetaMas: number, avMag: number, law: ExtinctionLawKey, rv: number): { wavelengthUm: number[]; lambdaFlux: number[] } {
  const s = dilutionFromThetaMas(thetaMas);
  const k = avMag !== 0 ? extinctionFunction({ law, rv }) : null;
  const wavelengthUm: number[] = [];
  const lambdaFlux: number[] = [];
  const lnMin = Math.log(CURVE_MIN_UM);
  const step = (Math.log(CURVE_MAX_UM) - lnMin) / (CURVE_POINTS - 1);
  for (let i = 0; i < CURVE_POINTS; i++) {
    const um = Math.exp(lnMin + i * step);
    const angstrom = um * 1e4;
    let f = s * Math.PI * planckLambdaCgsAngstrom(angstrom, teffK);
    if (k) {
      const a = k(angstrom);
      f *= Number.isFinite(a) ? Math.pow(10, -0.4 * avMag * a) : NaN;
    }
    if (!(f > 0) || !Number.isFinite(f)) continue;
    wavelengthUm.push(um);
    lambdaFlux.push(f * angstrom);
  }
  return { wavelengthUm, lambdaFlux };
}

export function starSheet(db: AppDatabase, campaignId: string, starRef: string | number): StarSheet {
  const sqlite = db.$client;
  const campaign = sqlite.prepare('SELECT id, name FROM campaigns WHERE id = ?').get(campaignId) as { id: string; name: string } | undefined;
  if (!campaign) throw new HttpError('not_found', 'No campaign with that id.');
  const star = findStar(db, campaignId, starRef);
  // Measurements are shown against the current band library; a fit's bands against the version it
  // was made with (versions are immutable), so a later change never moves an old fit's points.
  const current = getCurrentLibrary(db);

  const fits = sqlite
    .prepare(
      `SELECT r.*, b.created_at AS batch_created_at, b.started_by_id, u.name AS started_by_name
       FROM fit_results r JOIN batches b ON b.id = r.batch_id LEFT JOIN user u ON u.id = b.started_by_id
       WHERE r.star_id = ? ORDER BY b.created_at DESC, r.id DESC`,
    )
    .all(star.id) as FitRow[];
  const latest = fits[0] ?? null;
  const detail: FitDetail = latest?.detail ? (JSON.parse(latest.detail) as FitDetail) : {};
  const options = detail.options ?? {};

  const skippedBy = new Map<string, string>();
  for (const s of detail.skipped ?? []) skippedBy.set(`${s.band}\u0000${s.source}`, s.reason);
  const measurementRows = sqlite
    .prepare(
      `SELECT m.id, m.band_key, m.source, m.upload_id, up.original_name, m.mag, m.mag_err, m.fnu_jy, m.fnu_err_jy, m.upper_limit, m.quality,
              m.created_at, m.set_aside_at, m.set_aside_reason, sb.name AS set_aside_by,
              m.observation IS NOT NULL AS from_image, json_extract(m.observation, '$.filter') AS obs_filter, json_extract(m.observation, '$.dateObs') AS obs_date,
              json_extract(m.observation, '$.exptimeS') AS obs_exptime, json_extract(m.observation, '$.airmass') AS obs_airmass,
              json_extract(m.observation, '$.raDeg') AS obs_ra, json_extract(m.observation, '$.decDeg') AS obs_dec
       FROM measurements m LEFT JOIN uploads up ON up.id = m.upload_id LEFT JOIN user sb ON sb.id = m.set_aside_by_id
       WHERE m.star_id = ? ORDER BY m.band_key, m.source`,
    )
    .all(star.id) as {
    id: number; band_key: string; source: string; upload_id: string | null; original_name: string | null; mag: number | null; mag_err: number | null;
    fnu_jy: number | null; fnu_err_jy: number | null; upper_limit: number; quality: string | null;
    created_at: number; set_aside_at: number | null; set_aside_reason: string | null; set_aside_by: string | null;
    from_image: number; obs_filter: string | null; obs_date: string | null; obs_exptime: number | null; obs_airmass: number | null; obs_ra: number | null; obs_dec: number | null;
  }[];
  const num = (v: unknown) => (typeof v === 'number' && Number.isFinite(v) ? v : null);
  const str = (v: unknown) => (typeof v === 'string' && v !== '' ? v : null);
  const measurements: SheetMeasurement[] = measurementRows.map((m) => {
    const band = getBand(current, m.band_key);
    // A value brought in after the newest fit was made never reached it.
    const notUsedReason = skippedBy.get(`${m.band_key}\u0000${m.source}`) ?? (latest && m.created_at > latest.created_at ? 'added after the newest fit' : null);
    const inNewestFit: SheetMeasurement['inNewestFit'] = !latest ? null : notUsedReason !== null || !(detail.observed && m.band_key in detail.observed) ? 'not_used' : 'used';
    const setAside = m.set_aside_at !== null;
    return {
      id: m.id,
      bandKey: m.band_key,
      bandLabel: band?.label ?? null,
      pivotUm: band ? band.pivotAngstrom / 1e4 : null,
      source: m.source,
      upload: m.upload_id ? { id: m.upload_id, name: m.original_name ?? m.upload_id } : null,
      mag: m.mag,
      magErr: m.mag_err,
      fnuJy: m.fnu_jy,
      fnuErrJy: m.fnu_err_jy,
      upperLimit: m.upper_limit === 1,
      quality: m.quality,
      notUsedReason,
      inNewestFit,
      setAside: setAside ? { at: new Date(m.set_aside_at!).toISOString(), by: m.set_aside_by, reason: m.set_aside_reason } : null,
      changedSinceFit: !!latest && setAside !== (notUsedReason === SET_ASIDE_REASON),
      image: m.from_image === 1
        ? { filter: str(m.obs_filter), dateObs: str(m.obs_date), exptimeS: num(m.obs_exptime), airmass: num(m.obs_airmass), pointingRaDeg: num(m.obs_ra), pointingDecDeg: num(m.obs_dec) }
        : null,
    };
  });

  const bands: SheetBand[] = [];
  let curve: StarSheet['curve'] = null;
  let fit: SheetFit | null = null;
  if (latest) {
    const library = findLibrary(db, latest.band_library_version) ?? current;
    const floor = typeof options.floorFraction === 'number' ? options.floorFraction : 0;
    const excludedBy = new Map((detail.excluded ?? []).map((e) => [e.band, e.reason]));
    const excludedDetail = new Map((detail.excluded ?? []).flatMap((e) => (e.detail ? [[e.band, e.detail] as const] : [])));
    const withModel = latest.photosphere_name !== null;
    const planckFluxes = withModel && latest.tbb_model_fluxes ? (JSON.parse(latest.tbb_model_fluxes) as Record<string, number>) : {};
    for (const [key, obs] of Object.entries(detail.observed ?? {})) {
      const band = getBand(library, key);
      if (!band) continue;
      const pivot = band.pivotAngstrom;
      const sigma = applyFloor({ bandKey: key, fluxCgs: obs.fluxCgs, errCgs: obs.errCgs, upperLimit: obs.upperLimit }, floor).errCgs;
      const model = detail.modelFluxesCgs?.[key];
      const residual = detail.residualsSigma?.[key];
      const excludedReason = excludedBy.get(key);
      const outlier = typeof residual === 'number' && !obs.upperLimit && !excludedReason && Math.abs(residual) > OUTLIER_SIGMA;
      const role: SheetBand['role'] = excludedReason ? 'excluded' : obs.upperLimit ? 'upper_limit' : 'fitted';
      let note: string | null = null;
      if (excludedReason) note = `Not in the fit: ${EXCLUSION_LABELS[excludedReason] ?? excludedReason}${excludedDetail.has(key) ? ` (${excludedDetail.get(key)})` : ''}.`;
      else if (obs.upperLimit) note = 'Upper limit: counts only where the curve would exceed it.';
      else if (outlier) note = `More than ${OUTLIER_SIGMA}σ from the curve.`;
      bands.push({
        key,
        label: band.label,
        pivotAngstrom: pivot,
        pivotUm: pivot / 1e4,
        observedFluxCgs: obs.fluxCgs,
        errCgs: obs.errCgs,
        sigmaCgs: sigma,
        upperLimit: obs.upperLimit,
        modelFluxCgs: typeof model === 'number' && Number.isFinite(model) ? model : null,
        residualSigma: typeof residual === 'number' && Number.isFinite(residual) ? residual : null,
        observedLambdaFlux: obs.fluxCgs * pivot,
        sigmaLambdaFlux: sigma * pivot,
        modelLambdaFlux: typeof model === 'number' && Number.isFinite(model) ? model * pivot : null,
        planckModelLambdaFlux: Number.isFinite(planckFluxes[key]) ? planckFluxes[key] * pivot : null,
        role,
        outlier,
        note,
      });
    }
    bands.sort((a, b) => a.pivotAngstrom - b.pivotAngstrom);

    const law = (options.law ?? 'f99') as ExtinctionLawKey;
    const rv = typeof options.rv === 'number' ? options.rv : 3.1;
    // The blackbody drawn is the Planck fit's: with a photosphere model its own T_bb, θ and A_V
    // (the model's fit has band means only); without one, the fit itself.
    const curveTeff = withModel ? latest.tbb_k : latest.teff_k;
    const curveTheta = withModel ? (detail.planckFit?.thetaMas ?? null) : latest.theta_mas;
    const curveAv = withModel ? (detail.planckFit?.avMag ?? latest.av_mag ?? 0) : (latest.av_mag ?? 0);
    if (latest.ok === 1 && curveTeff !== null && curveTheta !== null) {
      curve = { ...sampleCurve(curveTeff, curveTheta, curveAv, law, rv), teffK: curveTeff, note: `Planck fit (blackbody), T = ${Math.round(curveTeff)} K` };
    }
    fit = {
      id: latest.id,
      batchId: latest.batch_id,
      batchCreatedAt: new Date(latest.batch_created_at).toISOString(),
      batchStartedBy: latest.started_by_id ? { id: latest.started_by_id, name: latest.started_by_name ?? 'former user' } : null,
      createdAt: new Date(latest.created_at).toISOString(),
      ok: latest.ok === 1,
      failureReason: latest.failure_reason,
      reviewStatus: latest.review_status,
      teffK: latest.teff_k,
      teffErrK: latest.teff_err_k,
      teffErrFormalK: latest.teff_err_formal_k,
      teffLowerK: latest.teff_lower_k,
      thetaMas: latest.theta_mas,
      thetaErrMas: latest.theta_err_mas,
      radiusRsun: latest.radius_rsun,
      radiusErrRsun: latest.radius_err_rsun,
      lumLsun: latest.lum_lsun,
      lumErrLsun: latest.lum_err_lsun,
      fbolCgs: latest.fbol_cgs,
      fbolErrCgs: latest.fbol_err_cgs,
      avMag: latest.av_mag,
      avErrMag: latest.av_err_mag,
      avFitted: detail.avFitted === true,
      chi2: typeof detail.chi2 === 'number' ? detail.chi2 : null,
      chi2Red: latest.chi2_red,
      nBands: latest.n_bands,
      bandsUsed: latest.bands_used ? latest.bands_used.split(' ') : [],
      irExcessSigma: latest.ir_excess_sigma,
      flags: explainFlags(latest.flags ? latest.flags.split(' ') : []),
      law: options.law ?? null,
      rv: typeof options.rv === 'number' ? options.rv : null,
      floorFraction: typeof options.floorFraction === 'number' ? options.floorFraction : null,
      bandLibraryVersion: latest.band_library_version,
      softwareVersion: latest.software_version,
      tbbK: latest.tbb_k,
      tbbErrK: latest.tbb_err_k,
      tbbErrFormalK: latest.tbb_err_formal_k,
      tbbLowerK: latest.tbb_lower_k,
      tbbChi2Red: latest.tbb_chi2_red,
      model: latest.photosphere_name === null ? null : `${latest.photosphere_name} ${latest.photosphere_version ?? ''}`.trim(),
      lumClass: latest.lum_class,
      lumClassSource: latest.lum_class_source,
      fehDex: latest.feh_dex,
    };
  }

  return {
    campaign: { id: campaign.id, name: campaign.name, fourEyes: getReviewSettings(db, campaignId).fourEyes },
    star: { id: star.id, starKey: star.star_key, raDeg: star.ra_deg, decDeg: star.dec_deg, parallaxMas: star.parallax_mas, parallaxErrMas: star.parallax_err_mas, avMag: star.av_mag },
    measurements,
    leftOut: (
      db.$client
        .prepare(
          `SELECT l.band_key, l.source, l.reason, l.detail, u.original_name FROM left_out_values l LEFT JOIN uploads u ON u.id = l.upload_id
           WHERE l.star_id = ? ORDER BY l.band_key, l.source`,
        )
        .all(star.id) as { band_key: string; source: string; reason: string; detail: string; original_name: string | null }[]
    ).map((l) => ({ bandKey: l.band_key, source: l.source, reason: l.reason, detail: l.detail, uploadName: l.original_name })),
    fit,
    bands,
    curve,
    earlierFits: fits.slice(1).map((f) => ({
      id: f.id,
      batchId: f.batch_id,
      createdAt: new Date(f.created_at).toISOString(),
      ok: f.ok === 1,
      teffK: f.teff_k,
      teffLowerK: f.teff_lower_k,
      chi2Red: f.chi2_red,
      reviewStatus: f.review_status,
    })),
    history: starHistory(db, star.id),
    carryover: fit ? carryoverOf(db, fit.id) : null,
  };
}
