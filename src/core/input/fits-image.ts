// Per-observation metadata from a FITS image header: FILTER, EXPTIME, DATE-OBS, AIRMASS, OBJECT,
// position and the photometric zero-point.
import { FitsError, FitsHeader, type FitsValue, type ReadFitsOptions } from './fits-header';
import { readFits } from './fits-hdus';

/** Per-observation metadata from an image header (docs/science.md, "Interfaces"). */
export interface FitsObservationMeta {
  hdu: number;
  object?: string;
  filter?: string;
  exptimeS?: number;
  dateObs?: string;
  airmass?: number;
  raDeg?: number;
  decDeg?: number;
  /** Which keywords gave RA/Dec (e.g. 'RA/DEC', 'OBJRA/OBJDEC', 'CRVAL1/CRVAL2'). */
  positionFrom?: string;
  zeroPointMag?: number;
  zeroPointErrMag?: number;
  /** The keyword the zero-point came from. */
  zeroPointKeyword?: string;
  /** The full headers read (the chosen HDU's cards; the primary's apply where it lacks a keyword). */
  header: FitsHeader;
  primaryHeader: FitsHeader;
  warnings: string[];
}

/** Zero-point keywords in the order we trust them; all are in common use by imaging pipelines. */
export const ZERO_POINT_KEYWORDS = ['MAGZP', 'MAGZPT', 'MAGZERO', 'PHOTZP', 'ZEROPT', 'ZPMAG', 'ZP', 'MAGZPT_AB'];
const ZERO_POINT_ERR_KEYWORDS: Record<string, string[]> = {
  MAGZP: ['MAGZPERR', 'MAGZPUNC', 'MAGZPER'],
  MAGZPT: ['MAGZPTER', 'MAGZPTERR', 'MAGZPERR'],
  MAGZERO: ['MAGZEROE', 'MAGZERR'],
  PHOTZP: ['PHOTZPER', 'PHOTZPERR', 'PHOTZPE'],
  ZEROPT: ['ZEROPTER', 'ZEROPTE'],
  ZPMAG: ['ZPMAGERR', 'ZPERR'],
  ZP: ['ZPERR', 'ZP_ERR', 'EZP'],
  MAGZPT_AB: ['MAGZPTER'],
};

/** Sexagesimal 'hh:mm:ss.s' / 'dd mm ss' or decimal; hours → degrees when asHours. */
export function parseAngle(value: FitsValue | undefined, asHours: boolean): number | undefined {
  if (typeof value === 'number') return value;
  if (typeof value !== 'string') return undefined;
  const t = value.trim();
  if (t === '') return undefined;
  if (/^[+-]?\d+(\.\d*)?([eE][+-]?\d+)?$/.test(t)) return Number(t);
  const m = /^([+-]?)(\d+)[:\sdh]+(\d+)[:\sm']+(\d+(?:\.\d*)?)\s*[s"]?$/.exec(t);
  if (!m) return undefined;
  const sign = m[1] === '-' ? -1 : 1;
  const v = sign * (Number(m[2]) + Number(m[3]) / 60 + Number(m[4]) / 3600);
  return asHours ? v * 15 : v;
}

/**
 * Observation metadata of an image: FILTER, EXPTIME, DATE-OBS, AIRMASS, OBJECT, position and the
 * photometric zero-point. Reads headers only, so a header-only or truncated upload still works.
 */
export function readFitsImageHeader(bytes: Uint8Array, options: ReadFitsOptions & { hdu?: number } = {}): FitsObservationMeta {
  const file = readFits(bytes, { ...options, allowTruncatedData: true });
  const primary = file.hdus[0];
  const chosen =
    options.hdu !== undefined
      ? file.hdus[options.hdu]
      : (file.hdus.find((h) => (h.kind === 'primary' || h.kind === 'image') && h.dataBytes > 0) ?? primary);
  if (!chosen) throw new FitsError(`${options.source ?? 'FITS file'}: no HDU ${options.hdu}`);
  // The chosen HDU's own keywords win; an extension inherits what it lacks from the primary
  // (INHERIT convention, registered with the IAU FITS Working Group).
  const headers = chosen === primary ? [chosen.header] : [chosen.header, primary.header];
  const str = (...keys: string[]) => {
    for (const h of headers) {
      for (const k of keys) {
        const v = h.get(k);
        if (typeof v === 'string' && v.trim() !== '') return v.trim();
      }
    }
    return undefined;
  };
  const numIn = (h: FitsHeader, keys: string[]) => {
    for (const k of keys) {
      const v = h.get(k);
      if (typeof v === 'number' && Number.isFinite(v)) return v;
      if (typeof v === 'string' && v.trim() !== '' && Number.isFinite(Number(v))) return Number(v);
    }
    return undefined;
  };
  const num = (...keys: string[]) => {
    for (const h of headers) {
      const v = numIn(h, keys);
      if (v !== undefined) return v;
    }
    return undefined;
  };
  const meta: FitsObservationMeta = { hdu: chosen.index, header: chosen.header, primaryHeader: primary.header, warnings: file.warnings };
  meta.object = str('OBJECT', 'OBJNAME', 'TARGNAME');
  meta.filter = str('FILTER', 'FILTNAME', 'FILTER1', 'BAND');
  meta.exptimeS = num('EXPTIME', 'EXPOSURE', 'ITIME');
  meta.airmass = num('AIRMASS', 'SECZ');
  const date = str('DATE-OBS');
  const time = str('TIME-OBS', 'UT', 'UTSTART');
  meta.dateObs = date && !date.includes('T') && time ? `${date}T${time}` : date;
  const pairs: [string, string][] = [
    ['RA', 'DEC'],
    ['OBJRA', 'OBJDEC'],
    ['OBJCTRA', 'OBJCTDEC'],
    ['RA_OBJ', 'DEC_OBJ'],
  ];
  position: for (const h of headers) {
    for (const [rk, dk] of pairs) {
      const ra = h.get(rk);
      const dec = h.get(dk);
      if (ra === undefined || dec === undefined) continue;
      // Numbers are degrees (common practice); sexagesimal RA is in hours.
      const raDeg = parseAngle(ra, typeof ra === 'string' && /[:\sh]/.test(ra.trim()));
      const decDeg = parseAngle(dec, false);
      if (raDeg !== undefined && decDeg !== undefined) {
        meta.raDeg = raDeg;
        meta.decDeg = decDeg;
        meta.positionFrom = `${rk}/${dk}`;
        break position;
      }
      meta.warnings.push(`cannot read the position from ${rk} = ${String(ra)}, ${dk} = ${String(dec)}`);
    }
    const c1 = String(h.get('CTYPE1') ?? '');
    const c2 = String(h.get('CTYPE2') ?? '');
    const v1 = h.get('CRVAL1');
    const v2 = h.get('CRVAL2');
    if (c1.startsWith('RA') && c2.startsWith('DEC') && typeof v1 === 'number' && typeof v2 === 'number') {
      meta.raDeg = v1;
      meta.decDeg = v2;
      meta.positionFrom = 'CRVAL1/CRVAL2';
      break;
    }
  }
  zeroPoint: for (const h of headers) {
    for (const k of ZERO_POINT_KEYWORDS) {
      const v = numIn(h, [k]);
      if (v === undefined) continue;
      meta.zeroPointMag = v;
      meta.zeroPointKeyword = k;
      meta.zeroPointErrMag = numIn(h, ZERO_POINT_ERR_KEYWORDS[k] ?? []);
      break zeroPoint;
    }
  }
  return meta;
}
