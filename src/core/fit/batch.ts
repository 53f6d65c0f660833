// Catalogue-scale fitting over typed arrays: the same engine as fitStar, without per-star objects.
// The worker and `npm run bench` use this; a batch is split across threads by [start, end) ranges,
// each thread with its own FitModel (tables are cheap to rebuild and never shared between threads).
//
//   packStars(model, stars, options)     StarInput[] → PackedStars (floor applied, roles set)
//   createPackedResults(count)           output columns
//   fitPacked(model, packed, out, options, start?, end?)

import { STATUS_OK, type FitEngine } from './engine';
import { FLAG_BITS } from './flags';
import { engineSettings, resolveFitOptions, starEntries, type FitModel, type FitOptions, type StarInput } from './fit-star';

export interface PackedStars {
  count: number;
  /** Star i owns entries offsets[i] … offsets[i+1]−1. */
  offsets: Int32Array;
  bandIndex: Int32Array;
  fluxCgs: Float64Array;
  /** 1σ with the systematic floor already applied. */
  sigmaCgs: Float64Array;
  upper: Uint8Array;
  /** Engine exclude code per entry (0 = fitted). */
  exclude: Uint8Array;
  /** Fixed A_V per star (NaN → options.avMag). */
  avMag: Float64Array;
  parallaxMas: Float64Array;
  parallaxErrMas: Float64Array;
}

export interface PackedResults {
  /** 0 ok, 1 too few bands, 2 no convergence. */
  status: Uint8Array;
  flags: Int32Array;
  teffK: Float64Array;
  teffErrK: Float64Array;
  teffErrFormalK: Float64Array;
  teffLowerK: Float64Array;
  thetaMas: Float64Array;
  thetaErrMas: Float64Array;
  radiusRsun: Float64Array;
  radiusErrRsun: Float64Array;
  lumLsun: Float64Array;
  lumErrLsun: Float64Array;
  fbolCgs: Float64Array;
  fbolErrCgs: Float64Array;
  avMag: Float64Array;
  avErrMag: Float64Array;
  chi2: Float64Array;
  chi2Red: Float64Array;
  nBands: Uint8Array;
  irExcessSigma: Float64Array;
}

export function createPackedStars(count: number, entries: number, buffer?: (bytes: number) => ArrayBufferLike): PackedStars {
  const alloc = buffer ?? ((bytes: number) => new ArrayBuffer(bytes));
  return {
    count,
    offsets: new Int32Array(alloc(4 * (count + 1))),
    bandIndex: new Int32Array(alloc(4 * entries)),
    fluxCgs: new Float64Array(alloc(8 * entries)),
    sigmaCgs: new Float64Array(alloc(8 * entries)),
    upper: new Uint8Array(alloc(entries)),
    exclude: new Uint8Array(alloc(entries)),
    avMag: new Float64Array(alloc(8 * count)),
    parallaxMas: new Float64Array(alloc(8 * count)),
    parallaxErrMas: new Float64Array(alloc(8 * count)),
  };
}

export function createPackedResults(count: number, buffer?: (bytes: number) => ArrayBufferLike): PackedResults {
  const alloc = buffer ?? ((bytes: number) => new ArrayBuffer(bytes));
  const f = () => new Float64Array(alloc(8 * count));
  return {
    status: new Uint8Array(alloc(count)),
    flags: new Int32Array(alloc(4 * count)),
    teffK: f(), teffErrK: f(), teffErrFormalK: f(), teffLowerK: f(), thetaMas: f(), thetaErrMas: f(),
    radiusRsun: f(), radiusErrRsun: f(), lumLsun: f(), lumErrLsun: f(), fbolCgs: f(), fbolErrCgs: f(),
    avMag: f(), avErrMag: f(), chi2: f(), chi2Red: f(),
    nBands: new Uint8Array(alloc(count)),
    irExcessSigma: f(),
  };
}

/** Packs stars for fitPacked (floor and band roles exactly as fitStar applies them). */
export function packStars(model: FitModel, stars: StarInput[], options?: Partial<FitOptions>): PackedStars {
  const opts = options ? resolveFitOptions({ ...model.options, ...options }) : model.options;
  const all = stars.map((s) => starEntries(model, s, opts).entries);
  const total = all.reduce((n, e) => n + e.length, 0);
  const p = createPackedStars(stars.length, total);
  let o = 0;
  for (let i = 0; i < stars.length; i++) {
    p.offsets[i] = o;
    for (const e of all[i]) {
      p.bandIndex[o] = e.bandIndex;
      p.fluxCgs[o] = e.flux;
      p.sigmaCgs[o] = e.sigma;
      p.upper[o] = e.upper ? 1 : 0;
      p.exclude[o] = e.exclude;
      o++;
    }
    const s = stars[i];
    p.avMag[i] = typeof s.avMag === 'number' ? s.avMag : NaN;
    p.parallaxMas[i] = typeof s.parallaxMas === 'number' ? s.parallaxMas : NaN;
    p.parallaxErrMas[i] = typeof s.parallaxErrMas === 'number' ? s.parallaxErrMas : NaN;
  }
  p.offsets[stars.length] = o;
  return p;
}

/**
 * Fits stars [start, end) of a packed batch into out (same indices). Complete fits: value, formal and
 * reported errors, θ, F_bol, R, L and flags. Lower-bound stars get teffK = NaN and teffLowerK set.
 */
export function fitPacked(model: FitModel, p: PackedStars, out: PackedResults, options?: Partial<FitOptions>, start = 0, end = p.count): void {
  const opts = options ? resolveFitOptions({ ...model.options, ...options }) : model.options;
  const settings = engineSettings(opts);
  const engine: FitEngine = model.engine;
  const defaultAv = opts.avMag;
  const { offsets, bandIndex, fluxCgs, sigmaCgs, upper, exclude } = p;
  const d = engine.derived;
  const oStatus = out.status, oFlags = out.flags, oN = out.nBands, oT = out.teffK, oTe = out.teffErrK;
  const oTf = out.teffErrFormalK, oTl = out.teffLowerK, oTh = out.thetaMas, oThe = out.thetaErrMas;
  const oR = out.radiusRsun, oRe = out.radiusErrRsun, oL = out.lumLsun, oLe = out.lumErrLsun;
  const oF = out.fbolCgs, oFe = out.fbolErrCgs, oA = out.avMag, oAe = out.avErrMag, oC = out.chi2;
  const oCr = out.chi2Red, oIr = out.irExcessSigma;
  const avIn = p.avMag, plxIn = p.parallaxMas, plxErrIn = p.parallaxErrMas;
  for (let i = start; i < end; i++) {
    engine.begin();
    const a = offsets[i];
    const b = offsets[i + 1];
    for (let k = a; k < b; k++) engine.add(bandIndex[k], fluxCgs[k], sigmaCgs[k], upper[k] === 1, exclude[k]);
    const av = avIn[i];
    const status = engine.run(settings, av === av ? av : defaultAv, plxIn[i], plxErrIn[i]);
    oStatus[i] = status;
    oFlags[i] = engine.flags;
    oN[i] = engine.nDet;
    if (status !== STATUS_OK) {
      oT[i] = NaN;
      continue;
    }
    const lower = (engine.flags & FLAG_BITS.temp_lower_bound) !== 0;
    if (lower) {
      oT[i] = oTe[i] = oTf[i] = oTh[i] = oThe[i] = oR[i] = oRe[i] = oL[i] = oLe[i] = oF[i] = oFe[i] = NaN;
    } else {
      oT[i] = d.teffK;
      oTe[i] = d.teffErrK;
      oTf[i] = d.teffErrFormalK;
      oTh[i] = d.thetaMas;
      oThe[i] = d.thetaErrMas;
      oR[i] = d.radiusRsun;
      oRe[i] = d.radiusErrRsun;
      oL[i] = d.lumLsun;
      oLe[i] = d.lumErrLsun;
      oF[i] = d.fbolCgs;
      oFe[i] = d.fbolErrCgs;
    }
    oTl[i] = engine.teffLowerK;
    oA[i] = engine.avMag;
    oAe[i] = d.avErrMag;
    oC[i] = engine.chi2;
    oCr[i] = engine.chi2Red;
    oIr[i] = engine.irExcessSigma;
  }
}
