// Units and UCDs of the catalogue columns for the VOTable and FITS writers. The names, order and
// descriptions come from src/core/catalogue.ts; this adds what the IVOA and FITS standards need.
// F_bol is in mW m⁻² everywhere (FBOL_UNIT, the same numbers as erg s⁻¹ cm⁻²): VOUnit deprecates erg.
// FITS units follow the FITS Standard 4.0, section 4.3 (solRad, solLum and erg are listed there).
import { FBOL_UNIT, type CatalogueColumn } from '../../core/catalogue';

export interface ColumnMeta {
  /** 'text' columns are written as strings; 'int' as 32-bit integers; the rest as doubles. */
  kind: 'text' | 'int' | 'double';
  voUnit?: string;
  fitsUnit?: string;
  ucd: string;
}

const META: Record<string, ColumnMeta> = {
  id: { kind: 'text', ucd: 'meta.id;meta.main' },
  ra: { kind: 'double', voUnit: 'deg', fitsUnit: 'deg', ucd: 'pos.eq.ra;meta.main' },
  dec: { kind: 'double', voUnit: 'deg', fitsUnit: 'deg', ucd: 'pos.eq.dec;meta.main' },
  teff_k: { kind: 'double', voUnit: 'K', fitsUnit: 'K', ucd: 'phys.temperature.effective' },
  teff_err_k: { kind: 'double', voUnit: 'K', fitsUnit: 'K', ucd: 'stat.error;phys.temperature.effective' },
  teff_err_formal_k: { kind: 'double', voUnit: 'K', fitsUnit: 'K', ucd: 'stat.error;phys.temperature.effective' },
  teff_lower_k: { kind: 'double', voUnit: 'K', fitsUnit: 'K', ucd: 'phys.temperature.effective;stat.min' },
  // A blackbody's colour temperature is not Teff: the plain phys.temperature of the IVOA UCD1+ list.
  tbb_k: { kind: 'double', voUnit: 'K', fitsUnit: 'K', ucd: 'phys.temperature' },
  tbb_err_k: { kind: 'double', voUnit: 'K', fitsUnit: 'K', ucd: 'stat.error;phys.temperature' },
  tbb_err_formal_k: { kind: 'double', voUnit: 'K', fitsUnit: 'K', ucd: 'stat.error;phys.temperature' },
  tbb_lower_k: { kind: 'double', voUnit: 'K', fitsUnit: 'K', ucd: 'phys.temperature;stat.min' },
  tbb_chi2_red: { kind: 'double', ucd: 'stat.fit.chi2' },
  theta_mas: { kind: 'double', voUnit: 'mas', fitsUnit: 'mas', ucd: 'phys.angSize;src' },
  theta_err_mas: { kind: 'double', voUnit: 'mas', fitsUnit: 'mas', ucd: 'stat.error;phys.angSize' },
  radius_rsun: { kind: 'double', voUnit: 'solRad', fitsUnit: 'solRad', ucd: 'phys.size.radius' },
  radius_err_rsun: { kind: 'double', voUnit: 'solRad', fitsUnit: 'solRad', ucd: 'stat.error;phys.size.radius' },
  lum_lsun: { kind: 'double', voUnit: 'solLum', fitsUnit: 'solLum', ucd: 'phys.luminosity' },
  lum_err_lsun: { kind: 'double', voUnit: 'solLum', fitsUnit: 'solLum', ucd: 'stat.error;phys.luminosity' },
  fbol_cgs: { kind: 'double', voUnit: FBOL_UNIT, fitsUnit: FBOL_UNIT, ucd: 'phot.flux.bol' },
  fbol_err_cgs: { kind: 'double', voUnit: FBOL_UNIT, fitsUnit: FBOL_UNIT, ucd: 'stat.error;phot.flux.bol' },
  av: { kind: 'double', voUnit: 'mag', fitsUnit: 'mag', ucd: 'phys.absorption;em.opt.V' },
  av_err: { kind: 'double', voUnit: 'mag', fitsUnit: 'mag', ucd: 'stat.error;phys.absorption;em.opt.V' },
  chi2_red: { kind: 'double', ucd: 'stat.fit.chi2' },
  n_bands: { kind: 'int', ucd: 'meta.number' },
  bands_used: { kind: 'text', ucd: 'meta.id;instr.filter' },
  ir_excess_sigma: { kind: 'double', ucd: 'stat.snr;em.IR' },
  flags: { kind: 'text', ucd: 'meta.code.qual' },
  lum_class: { kind: 'text', ucd: 'src.class.luminosity' },
  lum_class_source: { kind: 'text', ucd: 'meta.note' },
  // [Fe/H] in dex: neither VOUnit 1.0 nor the FITS Standard has dex (astropy refuses it in both), so no unit.
  feh: { kind: 'double', ucd: 'phys.abund.Fe' },
  model: { kind: 'text', ucd: 'meta.code' },
  review_status: { kind: 'text', ucd: 'meta.code.status' },
  batch_id: { kind: 'text', ucd: 'meta.id;meta.dataset' },
  review_mark: { kind: 'text', ucd: 'meta.code' },
};

export function columnMeta(c: CatalogueColumn): ColumnMeta {
  const m = META[c.name];
  if (!m) throw new Error(`catalogue column ${c.name} has no unit/UCD entry in src/server/exports/columns.ts`);
  return m;
}

/** Collects text into chunks of about `size` bytes so a stream gets few, large writes. */
export class Chunker {
  private parts: string[] = [];
  private length = 0;
  private readonly encoder = new TextEncoder();
  constructor(private readonly size = 64 * 1024) {}
  push(s: string): void {
    this.parts.push(s);
    this.length += s.length;
  }
  get full(): boolean {
    return this.length >= this.size;
  }
  take(): Uint8Array {
    const out = this.encoder.encode(this.parts.join(''));
    this.parts = [];
    this.length = 0;
    return out;
  }
}

/** One line: no line breaks inside a provenance line (a filter text could hold one). */
export const oneLine = (s: string) => s.replace(/[\r\n]+/g, ' ');
