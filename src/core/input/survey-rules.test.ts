// The survey rules (survey-rules.ts) on the Gaia FGK benchmark stars v3 (Soubiran et al. 2024;
// ../shared/data/benchmark, licence beside the file), read directly with the table's own column
// names, and on invented stars (the Kiln scenario) with realistic 2MASS, AllWISE and Gaia columns.
// Each bright limit is checked against its source's number: AllWISE W1 8.1 and W2 6.7 mag (WISE
// All-Sky Explanatory Supplement, Cutri et al. 2012; the AllWISE Supplement §II.1 says "W1 < 8 and
// W2 < 7"), Gaia BP for G < 3.94 and RP < 3.45 (Gaia EDR3 documentation §5.5.2).
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { STARTER_BAND_KEYS } from '../bands';
import { applyMapping, detectMapping, type ColumnTable, type MappingRules } from './mapping';
import { readUpload } from './table-file';
import { BRIGHT_LIMITS, RUWE_BRIGHT_G, bpRpExcessSigma, correctedBpRpExcess, gaiaBrightCorrection } from './survey-rules';

const keys = STARTER_BAND_KEYS;
const root = fileURLToPath(new URL('../../..', import.meta.url));
const benchFile = path.resolve(root, '../shared/data/benchmark/gbs_v3_dev_half.fits');

function benchmark(rules?: Partial<MappingRules>) {
  const read = readUpload(new Uint8Array(readFileSync(benchFile)), 'gbs_v3_dev_half.fits');
  if (read.format !== 'fits-table') throw new Error('not a FITS table');
  const t = read.table;
  const d = detectMapping(t.columns, t.rows.slice(0, 50), keys);
  const result = applyMapping(t, d, { ...d.rules, ...rules }, { bandKeys: keys });
  const col = (name: string) => t.columns.indexOf(name);
  const value = (row: number, name: string) => {
    const v = t.rows[row][col(name)];
    return v === null || v === undefined || v === '' ? NaN : Number(v);
  };
  const text = (row: number, name: string) => String(t.rows[row][col(name)] ?? '');
  const rowOf = (hip: string) => t.rows.findIndex((r) => String(r[col('hip')]) === hip);
  return { t, d, result, value, text, rowOf, star: (hip: string) => result.stars.find((s) => s.id === hip)! };
}

function table(columns: string[], rows: (string | number | null)[][]): ColumnTable {
  return { file: 'kiln-survey.csv', columns, rows };
}

function mapped(columns: string[], rows: (string | number | null)[][], rules?: Partial<MappingRules>) {
  const t = table(columns, rows);
  const d = detectMapping(columns, rows, keys);
  return { d, r: applyMapping(t, d, { ...d.rules, ...rules }, { bandKeys: keys }) };
}

describe('the benchmark table, read with its own column names', () => {
  const b = benchmark();

  it('detects the catalogue flag columns and the parallax origins', () => {
    expect(b.d.columns.ruwe).toEqual({ role: 'ruwe' });
    expect(b.d.columns.phot_bp_rp_excess_factor).toEqual({ role: 'bp_rp_excess' });
    // `parallax` beside Gaia archive columns is Gaia DR3's; parallax_hip is noted as a second candidate.
    expect(b.d.columns.parallax).toEqual({ role: 'parallax', origin: 'gaia_dr3' });
    expect(b.d.notes.parallax_hip).toMatch(/looks like parallax/);
    // r_med_geo, r_lo_geo, r_hi_geo: the Bailer-Jones et al. (2021) geometric distance and its interval.
    expect([b.d.columns.r_med_geo, b.d.columns.r_lo_geo, b.d.columns.r_hi_geo]).toEqual([{ role: 'distance' }, { role: 'distance_lo' }, { role: 'distance_hi' }]);
    expect(b.result.errorCount).toBe(0);
  });

  it("HIP 19849: W1 6.23 and W2 5.61 (quality A) are left out as saturated, with the AllWISE limits' source", () => {
    const row = b.rowOf('HIP19849');
    expect(b.text(row, 'ph_qual_allwise')).toBe('AAAA');
    expect(b.value(row, 'w1mpro')).toBeCloseTo(6.229, 3);
    const s = b.star('HIP19849');
    const w1 = s.leftOut!.find((l) => l.bandKey === 'W1')!;
    const w2 = s.leftOut!.find((l) => l.bandKey === 'W2')!;
    expect(w1.reason).toBe('saturated');
    expect(w1.detail).toMatch(/W1 6\.229 is brighter than the bright limit 8\.1 mag \(WISE All-Sky Explanatory Supplement \(Cutri et al\. 2012\)/);
    expect(w2.reason).toBe('saturated');
    expect(w2.detail).toMatch(/6\.7 mag/);
    expect(s.measurements.map((m) => m.bandKey)).not.toContain('W1');
    // The distance read is the table's r_med_geo (5.009 pc) with its interval.
    expect(s.distancePc).toBeCloseTo(5.0092, 3);
    expect(s.distanceLoPc! < s.distancePc! && s.distanceHiPc! > s.distancePc!).toBe(true);
  });

  it('every W1 brighter than 8.1 mag is left out; the 24 with A/B letters the issue counted among them', () => {
    let saturatedAB = 0;
    for (let i = 0; i < b.t.rows.length; i++) {
      const w1 = b.value(i, 'w1mpro');
      if (!(w1 < BRIGHT_LIMITS.W1.mag)) continue;
      const s = b.star(String(b.t.rows[i][b.t.columns.indexOf('hip')]));
      expect(s.measurements.some((m) => m.bandKey === 'W1')).toBe(false);
      if ('AB'.includes(b.text(i, 'ph_qual_allwise').charAt(0) || '-')) {
        saturatedAB++;
        expect(s.leftOut!.find((l) => l.bandKey === 'W1')!.reason).toBe('saturated');
      }
    }
    expect(saturatedAB).toBe(24);
  });

  it('no AllWISE magnitude without an error becomes an upper limit: every one is brighter than its bright limit', () => {
    let nullErrors = 0;
    for (let i = 0; i < b.t.rows.length; i++) {
      for (const [k, m] of [['W1', 'w1mpro'], ['W2', 'w2mpro'], ['W3', 'w3mpro'], ['W4', 'w4mpro']] as const) {
        if (Number.isFinite(b.value(i, m)) && !Number.isFinite(b.value(i, `${m}_error`))) {
          nullErrors++;
          expect(b.value(i, m)).toBeLessThan(BRIGHT_LIMITS[k].mag);
        }
      }
    }
    expect(nullErrors).toBeGreaterThan(40);
    expect(b.result.nativeUpperLimits).toBe(0);
    expect(b.result.stars.every((s) => s.measurements.every((m) => !m.upperLimit))).toBe(true);
  });

  it("Gaia's bright-star corrections move G, BP and RP inside their ranges; brighter than 2 mag the value is left out (Gaia EDR3 documentation §5.5.2)", () => {
    let bp = 0;
    let rp = 0;
    for (let i = 0; i < b.t.rows.length; i++) {
      const g = b.value(i, 'phot_g_mean_mag');
      const rpRaw = b.value(i, 'phot_rp_mean_mag');
      if (!Number.isFinite(g)) continue;
      const s = b.star(String(b.t.rows[i][b.t.columns.indexOf('hip')]));
      const mag = (k: string) => s.measurements.find((m) => m.bandKey === k)?.mag;
      // Eq. 5.29 for 2 < G < 8 (every benchmark star with G is in that range).
      expect(mag('G')! - g).toBeCloseTo(gaiaBrightCorrection('G', g)!, 6);
      if (g < 3.94) {
        expect(mag('BP')! - b.value(i, 'phot_bp_mean_mag')).toBeCloseTo(gaiaBrightCorrection('BP', g)!, 6);
        bp++;
      } else expect(mag('BP')).toBeCloseTo(b.value(i, 'phot_bp_mean_mag'), 6);
      if (rpRaw < 3.45) {
        expect(mag('RP')! - rpRaw).toBeCloseTo(gaiaBrightCorrection('RP', rpRaw)!, 6);
        rp++;
      }
    }
    expect(bp).toBeGreaterThan(10);
    expect(rp).toBeGreaterThan(10);
    expect(b.result.problems.some((p) => p.row === 0 && /21 stars brighter than G 3\.94: the BP\/RP flux excess was not tested/.test(p.message))).toBe(true);
  });

  it('the bright-star relations give the documented polynomials at check points (values worked by hand from eqs. 5.29–5.31)', () => {
    // G 5: −0.09892 + 0.295 − 0.244375 + 0.061675 = 0.01338
    expect(gaiaBrightCorrection('G', 5)).toBeCloseTo(0.01338, 6);
    // BP at G 3: −0.9921 − 0.07794 + 1.6497 − 0.77274 = −0.19308
    expect(gaiaBrightCorrection('BP', 3)).toBeCloseTo(-0.19308, 6);
    // RP at G_RP 2.5: −14.94 + 36.025 − 29.10625 + 7.859375 = −0.161875
    expect(gaiaBrightCorrection('RP', 2.5)).toBeCloseTo(-0.161875, 6);
    // Fainter than the ranges nothing moves; brighter than 2 mag nothing is calibrated.
    expect(gaiaBrightCorrection('G', 8)).toBe(0);
    expect(gaiaBrightCorrection('BP', 4)).toBe(0);
    expect(gaiaBrightCorrection('RP', 3.5)).toBe(0);
    expect(gaiaBrightCorrection('G', 1.9)).toBeUndefined();
    expect(gaiaBrightCorrection('RP', 2)).toBeUndefined();
  });

  it('RUWE > 1.4 flags possible_companion only at G ≥ 6; the brighter ones (most of them) are named in one report line', () => {
    let flagged = 0;
    let bright = 0;
    for (let i = 0; i < b.t.rows.length; i++) {
      const ruwe = b.value(i, 'ruwe');
      const g = b.value(i, 'phot_g_mean_mag');
      const s = b.star(String(b.t.rows[i][b.t.columns.indexOf('hip')]));
      const expected = ruwe > 1.4 && g >= RUWE_BRIGHT_G;
      expect(s.possibleCompanion === true, s.id).toBe(expected);
      if (expected) flagged++;
      else if (ruwe > 1.4) bright++;
    }
    // The issue: 36 of 91 stars have RUWE > 1.4, most of them with G < 5.
    expect(flagged + bright).toBe(36);
    expect(flagged).toBe(2);
    expect(b.result.possibleCompanions).toBe(2);
    expect(b.result.problems.some((p) => p.row === 0 && /34 stars brighter than G 6 with RUWE above 1\.4 not flagged/.test(p.message))).toBe(true);
  });

  it('the corrected BP/RP excess of the fainter stars (G ≥ 3.94) lies within 3σ: BP/RP are not left out for it', () => {
    for (let i = 0; i < b.t.rows.length; i++) {
      const g = b.value(i, 'phot_g_mean_mag');
      if (!(g >= 3.94)) continue;
      const c = correctedBpRpExcess(b.value(i, 'phot_bp_rp_excess_factor'), b.value(i, 'bp_rp'));
      expect(Math.abs(c) / bpRpExcessSigma(g)).toBeLessThan(3);
    }
    expect(b.result.stars.some((s) => s.leftOut?.some((l) => l.reason === 'bp_rp_excess'))).toBe(false);
  });

  it('brightLimits off: HIP 19849 keeps W1 and W2 (to test robust rejection without the rules)', () => {
    const off = benchmark({ survey: { brightLimits: 'off' } });
    expect(off.star('HIP19849').measurements.map((m) => m.bandKey)).toEqual(expect.arrayContaining(['W1', 'W2']));
    expect((off.star('HIP19849').leftOut ?? []).filter((l) => l.reason !== 'quality_letter')).toEqual([]);
    // Native upper limits keep their saturation check even then (a limit there would bind wrongly): the
    // 86 AllWISE null-error values. The bright stars' BP/RP are not tested for their flux excess (it
    // comes from saturated fluxes there) and nothing else is left out.
    const reasons = off.result.stars.flatMap((x) => (x.leftOut ?? []).filter((l) => l.reason !== 'quality_letter'));
    expect(reasons.filter((l) => l.reason === 'saturated' && /native upper limit/.test(l.detail))).toHaveLength(86);
    expect(reasons).toHaveLength(86);
    // Nor is anything corrected with the bright limits off.
    const hip = off.star('HIP109176');
    // (read from the flux column, so equal to the catalogue magnitude to 1e-6 mag, mapping.test.ts)
    expect(hip.measurements.find((m) => m.bandKey === 'BP')!.mag).toBeCloseTo(off.value(off.rowOf('HIP109176'), 'phot_bp_mean_mag'), 6);
  });
});

describe('invented stars with survey columns (Kiln scenario)', () => {
  it('2MASS U letters become upper limits only when fainter than the bright limit', () => {
    const cols = ['star', 'j_m', 'j_msigcom', 'h_m', 'h_msigcom', 'k_m', 'k_msigcom', 'ph_qual'];
    const { r } = mapped(cols, [
      ['kiln-u1', 12.1, 0.02, 11.8, null, 11.7, 0.03, 'AUA'],
      ['kiln-u2', 5.1, 0.3, 3.2, null, 4.9, 0.3, 'DUD'],
    ]);
    expect(r.stars[0].measurements.find((m) => m.bandKey === 'H')).toEqual({ bandKey: 'H', mag: 11.8, upperLimit: true, quality: 'U' });
    expect(r.nativeUpperLimits).toBe(1);
    // H 3.2 is brighter than the 2MASS Read_1 limit H 4.0: a limit there would be wrongly binding.
    expect(r.stars[1].measurements.some((m) => m.bandKey === 'H')).toBe(false);
    expect(r.stars[1].leftOut!.find((l) => l.bandKey === 'H')).toMatchObject({ reason: 'saturated' });
    // D letters are left out by the quality rule with their reason too.
    expect(r.stars[1].leftOut!.find((l) => l.bandKey === 'J')).toMatchObject({ reason: 'quality_letter', detail: 'quality letter D in ph_qual (kept: AB)' });
    expect(r.problems.some((p) => p.row === 0 && /1 H value read as upper limits by the catalogue's own convention/.test(p.message))).toBe(true);
  });

  it('an AllWISE magnitude without an error is an upper limit; a canonical W1 without error is not', () => {
    const { r } = mapped(['star', 'w1mpro', 'w1sigmpro', 'w2mpro', 'w2sigmpro'], [['kiln-w1', 14.2, 0.03, 15.9, null]]);
    expect(r.stars[0].measurements).toEqual([
      { bandKey: 'W1', mag: 14.2, magErr: 0.03 },
      { bandKey: 'W2', mag: 15.9, upperLimit: true },
    ]);
    const canonical = mapped(['star', 'W2', 'W2_err'], [['kiln-w2', 15.9, null]]).r;
    expect(canonical.stars[0].measurements).toEqual([]);
    const off = mapped(['star', 'w2mpro', 'w2sigmpro'], [['kiln-w3', 15.9, null]], { survey: { nativeUpperLimits: false } }).r;
    expect(off.stars[0].measurements).toEqual([]);
  });

  it('canonical <band> columns get no bright limit unless asked; a limit can be replaced per band', () => {
    const cols = ['star', 'W1', 'W1_err', 'w2mpro', 'w2mpro_error'];
    const row = ['kiln-b1', 6.0, 0.03, 6.0, 0.03];
    const def = mapped(cols, [row]).r.stars[0];
    expect(def.measurements.map((m) => m.bandKey)).toEqual(['W1']);
    expect(def.leftOut).toEqual([{ bandKey: 'W2', reason: 'saturated', detail: expect.stringMatching(/W2 6 is brighter than the bright limit 6\.7 mag/) }]);
    const all = mapped(cols, [row], { survey: { brightLimits: 'all' } }).r.stars[0];
    expect(all.measurements).toEqual([]);
    const replaced = mapped(cols, [row], { survey: { brightLimits: 'all', brightLimitMag: { W1: 5.5, W2: 5.5 } } }).r.stars[0];
    expect(replaced.measurements.map((m) => m.bandKey)).toEqual(['W1', 'W2']);
  });

  it('cc_flg, cc_flags and ext_flg leave the flagged bands out with the reason', () => {
    const cols = ['star', 'j_m', 'j_msigcom', 'h_m', 'h_msigcom', 'ph_qual', 'cc_flg', 'w1mpro', 'w1mpro_error', 'w2mpro', 'w2mpro_error', 'cc_flags', 'ext_flg'];
    const { d, r } = mapped(cols, [
      ['kiln-c1', 10.1, 0.02, 9.8, 0.02, 'AAA', '0p0', 9.6, 0.02, 9.6, 0.02, '0000', 0],
      ['kiln-c2', 10.1, 0.02, 9.8, 0.02, 'AAA', '000', 9.6, 0.02, 9.6, 0.02, 'h000', 1],
    ]);
    expect(d.columns.cc_flg).toEqual({ role: 'confusion', bands: ['J', 'H', 'Ks'] });
    expect(d.columns.cc_flags).toEqual({ role: 'confusion', bands: ['W1', 'W2', 'W3', 'W4'] });
    expect(d.columns.ext_flg).toEqual({ role: 'extended', bands: ['W1', 'W2', 'W3', 'W4'] });
    expect(r.stars[0].measurements.map((m) => m.bandKey)).toEqual(['J', 'W1', 'W2']);
    expect(r.stars[0].leftOut).toEqual([{ bandKey: 'H', reason: 'catalogue_flag', detail: 'contamination letter p in cc_flg (only 0, clean, is used)' }]);
    expect(r.stars[1].measurements.map((m) => m.bandKey)).toEqual(['J', 'H']);
    expect(r.stars[1].leftOut!.map((l) => [l.bandKey, l.reason])).toEqual([['W1', 'catalogue_flag'], ['W2', 'catalogue_flag']]);
    expect(r.stars[1].leftOut![0].detail).toMatch(/contamination letter h in cc_flags/);
    expect(r.stars[1].leftOut![1].detail).toMatch(/extended source: ext_flg = 1/);
    const off = mapped(cols, [['kiln-c3', 10.1, 0.02, 9.8, 0.02, 'AAA', '0p0', 9.6, 0.02, 9.6, 0.02, 'h000', 1]], { survey: { catalogueFlags: false } }).r;
    expect(off.stars[0].measurements).toHaveLength(4);
  });

  it('brighter than 2 mag (G for G and BP, G_RP for RP) a Gaia value is left out as saturated; canonical columns are not corrected', () => {
    const cols = ['source_id', 'phot_g_mean_mag', 'phot_g_mean_mag_error', 'phot_bp_mean_mag', 'phot_bp_mean_mag_error', 'phot_rp_mean_mag', 'phot_rp_mean_mag_error'];
    const { r } = mapped(cols, [
      ['kiln-b1', 1.9, 0.003, 2.3, 0.003, 1.4, 0.004],
      ['kiln-b2', 2.5, 0.003, 3.0, 0.003, 1.95, 0.004],
    ]);
    expect(r.stars[0].measurements).toEqual([]);
    expect(r.stars[0].leftOut!.map((l) => [l.bandKey, l.reason])).toEqual([['G', 'saturated'], ['BP', 'saturated'], ['RP', 'saturated']]);
    expect(r.stars[0].leftOut![1].detail).toMatch(/BP 2\.3 with G 1\.9 is brighter than the bright limit G 2 mag \(Gaia EDR3 documentation §5\.5\.2/);
    // G 2.5 and BP (on G 2.5) are inside the relations' ranges and corrected; RP 1.95 is not.
    expect(r.stars[1].measurements.map((m) => [m.bandKey, m.mag])).toEqual([
      ['G', 2.5 + gaiaBrightCorrection('G', 2.5)!],
      ['BP', 3.0 + gaiaBrightCorrection('BP', 2.5)!],
    ]);
    const canonical = mapped(['star', 'G', 'G_err', 'BP', 'BP_err'], [['kiln-b3', 2.5, 0.003, 3.0, 0.003]]).r;
    expect(canonical.stars[0].measurements.map((m) => m.mag)).toEqual([2.5, 3.0]);
  });

  it('a large corrected BP/RP excess leaves BP and RP out, G stays', () => {
    // BP − RP = 0.8: f = 1.162004 + 0.011464·0.8 + 0.049255·0.64 − 0.005879·0.512 = 1.19970 (Riello et al. 2021, Table 2).
    expect(correctedBpRpExcess(1.2, 0.8)).toBeCloseTo(1.2 - 1.1997, 4);
    const cols = ['source_id', 'phot_g_mean_mag', 'phot_g_mean_mag_error', 'phot_bp_mean_mag', 'phot_bp_mean_mag_error', 'phot_rp_mean_mag', 'phot_rp_mean_mag_error', 'phot_bp_rp_excess_factor'];
    const { r } = mapped(cols, [
      ['kiln-x1', 12.0, 0.003, 12.4, 0.003, 11.6, 0.004, 1.5],
      ['kiln-x2', 12.0, 0.003, 12.4, 0.003, 11.6, 0.004, 1.2],
    ]);
    expect(r.stars[0].measurements.map((m) => m.bandKey)).toEqual(['G']);
    expect(r.stars[0].leftOut!.map((l) => [l.bandKey, l.reason])).toEqual([['BP', 'bp_rp_excess'], ['RP', 'bp_rp_excess']]);
    expect(r.stars[1].measurements.map((m) => m.bandKey)).toEqual(['G', 'BP', 'RP']);
  });

  it('distance columns: read, checked by row and column', () => {
    const cols = ['star', 'distance_pc', 'distance_lo_pc', 'distance_hi_pc'];
    const { r } = mapped(cols, [
      ['kiln-d1', 120, 110, 131],
      ['kiln-d2', 120, 125, 131],
      ['kiln-d3', -5, null, null],
    ]);
    expect(r.stars.map((s) => [s.id, s.distancePc, s.distanceLoPc, s.distanceHiPc])).toEqual([['kiln-d1', 120, 110, 131]]);
    const msgs = r.problems.filter((p) => p.severity === 'error');
    expect(msgs[0]).toMatchObject({ file: 'kiln-survey.csv', row: 2, column: { name: 'distance_lo_pc', number: 3 } });
    expect(msgs[0].message).toBe('row 2, column distance_lo_pc: distance lower end 125 pc is above the distance 120 pc');
    expect(msgs[1].message).toBe('row 3, column distance_pc: distance -5 pc must be positive');
  });

  it('parallax origin: Gaia DR3 beside Gaia archive columns, Hipparcos by name, other for a plain parallax_mas', () => {
    expect(detectMapping(['source_id', 'parallax', 'ruwe'], [['1', 5, 1.0]], keys).columns.parallax).toEqual({ role: 'parallax', origin: 'gaia_dr3' });
    expect(detectMapping(['hip', 'parallax_hip'], [['1', 5]], keys).columns.parallax_hip).toEqual({ role: 'parallax', origin: 'hipparcos' });
    expect(detectMapping(['id', 'parallax_mas', 'G'], [['1', 5, 9]], keys).columns.parallax_mas).toEqual({ role: 'parallax', origin: 'other' });
    // A DR2 table keeps its parallax uncorrected (DR3's zero-point is not DR2's).
    expect(detectMapping(['dr2_source_id', 'parallax', 'phot_g_mean_mag'], [['1', 5, 9]], keys).columns.parallax).toEqual({ role: 'parallax', origin: 'other' });
    const { r } = mapped(['source_id', 'parallax', 'ruwe'], [['kiln-p', 5, 1.0]], { survey: { parallaxOrigin: 'hipparcos' } });
    expect(r.stars[0].parallaxOrigin).toBe('hipparcos');
  });
});
