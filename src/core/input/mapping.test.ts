import { describe, expect, it } from 'vitest';
import { STARTER_BAND_KEYS } from '../bands';
import { applyMapping, checkMapping, closestBandKey, detectMapping, matchBandColumn, mistypedBandColumn, readCellNumber, type ColumnTable, type Mapping } from './mapping';

const keys = STARTER_BAND_KEYS;

function roles(columns: string[], rows: (string | number | null)[][] = []) {
  const m = detectMapping(columns, rows, keys);
  return Object.fromEntries(Object.entries(m.columns).map(([c, a]) => [c, a.band ? `${a.band}:${a.role}` : a.bands ? `${a.role}:${a.bands.join(',')}` : a.role]));
}

describe('detectMapping: column names', () => {
  it('reads the canonical wide names (docs/science.md, "Interfaces")', () => {
    expect(roles(['id', 'ra', 'dec', 'parallax_mas', 'parallax_err_mas', 'av', 'V', 'V_err', 'W1_jy', 'W1_jy_err', 'W4_ul', 'Ks_jy_ul'])).toEqual({
      id: 'id', ra: 'ra', dec: 'dec', parallax_mas: 'parallax', parallax_err_mas: 'parallax_err', av: 'av',
      V: 'V:mag', V_err: 'V:mag_err', W1_jy: 'W1:jy', W1_jy_err: 'W1:jy_err', W4_ul: 'W4:mag_ul', Ks_jy_ul: 'Ks:jy_ul',
    });
  });

  it('reads VizieR-style names: Vmag/e_Vmag, e_V, Jmag/Kmag, W1mag, BTmag, RA_ICRS/DE_ICRS, Plx/e_Plx', () => {
    expect(roles(['Name', 'RA_ICRS', 'DE_ICRS', 'Plx', 'e_Plx', 'Vmag', 'e_Vmag', 'Bmag', 'e_B', 'Jmag', 'e_Jmag', 'Kmag', 'e_Kmag', 'W1mag', 'e_W1mag', 'BTmag', 'e_BTmag', 'Gmag', 'e_Gmag', 'BPmag', 'RPmag'])).toEqual({
      Name: 'id', RA_ICRS: 'ra', DE_ICRS: 'dec', Plx: 'parallax', e_Plx: 'parallax_err',
      Vmag: 'V:mag', e_Vmag: 'V:mag_err', Bmag: 'B:mag', e_B: 'B:mag_err', Jmag: 'J:mag', e_Jmag: 'J:mag_err',
      Kmag: 'Ks:mag', e_Kmag: 'Ks:mag_err', W1mag: 'W1:mag', e_W1mag: 'W1:mag_err', BTmag: 'BT:mag', e_BTmag: 'BT:mag_err',
      Gmag: 'G:mag', e_Gmag: 'G:mag_err', BPmag: 'BP:mag', RPmag: 'RP:mag',
    });
  });

  it('keeps SDSS g apart from Gaia G and SDSS r/i/u from Bessell R/I/U by case', () => {
    expect(roles(['id', 'gmag', 'Gmag', 'rmag', 'Rmag', 'imag', 'e_imag', 'umag', 'Umag'])).toMatchObject({
      gmag: 'g:mag', Gmag: 'G:mag', rmag: 'r:mag', Rmag: 'R:mag', imag: 'i:mag', e_imag: 'i:mag_err', umag: 'u:mag', Umag: 'U:mag',
    });
  });

  it('reads 2MASS point-source names j_m/j_msigcom with ph_qual, and suggests keeping quality A and B', () => {
    const cols = ['designation', 'j_m', 'j_msigcom', 'h_m', 'h_msigcom', 'k_m', 'k_msigcom', 'ph_qual'];
    const m = detectMapping(cols, [['x', 5, 0.02, 4.6, 0.03, 4.5, 0.02, 'AAB']], keys);
    expect(roles(cols, [['x', 5, 0.02, 4.6, 0.03, 4.5, 0.02, 'AAB']])).toEqual({
      designation: 'id', j_m: 'J:mag', j_msigcom: 'J:mag_err', h_m: 'H:mag', h_msigcom: 'H:mag_err', k_m: 'Ks:mag', k_msigcom: 'Ks:mag_err', ph_qual: 'quality:J,H,Ks',
    });
    expect(m.rules.quality).toEqual([{ column: 'ph_qual', keep: ['A', 'B'] }]);
  });

  it('reads Gaia archive names and prefers the flux with its error over the catalogue magnitude', () => {
    const cols = ['source_id', 'ra', 'dec', 'parallax', 'parallax_error', 'phot_g_mean_flux', 'phot_g_mean_flux_error', 'phot_g_mean_mag', 'phot_bp_mean_flux', 'phot_bp_mean_flux_error', 'phot_rp_mean_flux', 'phot_rp_mean_flux_error', 'phot_rp_mean_mag'];
    const m = detectMapping(cols, [], keys);
    expect(roles(cols)).toEqual({
      source_id: 'id', ra: 'ra', dec: 'dec', parallax: 'parallax', parallax_error: 'parallax_err',
      phot_g_mean_flux: 'G:gaia_flux', phot_g_mean_flux_error: 'G:gaia_flux_err', phot_g_mean_mag: 'ignore',
      phot_bp_mean_flux: 'BP:gaia_flux', phot_bp_mean_flux_error: 'BP:gaia_flux_err',
      phot_rp_mean_flux: 'RP:gaia_flux', phot_rp_mean_flux_error: 'RP:gaia_flux_err', phot_rp_mean_mag: 'ignore',
    });
    expect(m.notes.phot_g_mean_mag).toMatch(/phot_g_mean_flux/);
    // Without a flux error column the magnitude is used instead.
    expect(roles(['id', 'phot_g_mean_flux', 'phot_g_mean_mag'])).toMatchObject({ phot_g_mean_flux: 'ignore', phot_g_mean_mag: 'G:mag' });
    // A magnitude error in the archive's spelling (phot_<band>_mean_mag_error) is the magnitude's error,
    // for G, BP and RP alike, so the bands are used rather than dropped for want of an error.
    const magOnly = ['source_id', 'phot_g_mean_mag', 'phot_g_mean_mag_error', 'phot_bp_mean_mag', 'phot_bp_mean_mag_error', 'phot_rp_mean_mag', 'phot_rp_mean_mag_error'];
    expect(roles(magOnly)).toEqual({
      source_id: 'id',
      phot_g_mean_mag: 'G:mag', phot_g_mean_mag_error: 'G:mag_err',
      phot_bp_mean_mag: 'BP:mag', phot_bp_mean_mag_error: 'BP:mag_err',
      phot_rp_mean_mag: 'RP:mag', phot_rp_mean_mag_error: 'RP:mag_err',
    });
  });

  it('reads the Gaia FGK benchmark table names (Soubiran et al. 2024: hip, ra/ra_j2000, ks_m, w1mpro, hp_mag, ph_qual_tmass/_allwise)', () => {
    const cols = ['hip', 'hd', 'ra_j2000', 'dec_j2000', 'hp_mag', 'e_hp_mag', 'ph_qual_tmass', 'j_m', 'j_msigcom', 'ks_m', 'ks_msigcom', 'ra', 'dec', 'parallax', 'parallax_error', 'l', 'b', 'logg', 'w1mpro', 'w1mpro_error', 'w4mpro', 'w4mpro_error', 'ph_qual_allwise', 'grvs_mag', 'bp_rp'];
    const row = ['HIP101345', 'HD195564', 308.1, -9.85, 5.8003, 0.0008, 'DDE', 4.309, 0.282, 3.999, 0.036, 308.1, -9.85, 40.4, 0.05, 35.4, -26.9, 3.95, 4.106, 0.27, 3.973, 0.024, 'BBAA', 4.79, 0.87];
    const r = roles(cols, [row]);
    expect(r).toMatchObject({
      hip: 'id', hd: 'ignore', ra: 'ra', dec: 'dec', ra_j2000: 'ignore', hp_mag: 'Hp:mag', e_hp_mag: 'Hp:mag_err',
      ph_qual_tmass: 'quality:J,H,Ks', j_m: 'J:mag', ks_m: 'Ks:mag', ks_msigcom: 'Ks:mag_err', parallax: 'parallax', parallax_error: 'parallax_err',
      w1mpro: 'W1:mag', w1mpro_error: 'W1:mag_err', w4mpro: 'W4:mag', ph_qual_allwise: 'quality:W1,W2,W3,W4',
      // galactic latitude b is not Bessell B; logg, grvs_mag and bp_rp are not bands here
      l: 'ignore', b: 'ignore', logg: 'ignore', grvs_mag: 'ignore', bp_rp: 'ignore',
    });
  });

  it('detects the long format by a band column holding band keys', () => {
    const m = detectMapping(['id', 'band', 'mag', 'mag_err', 'jy', 'jy_err', 'ul', 'parallax_mas'], [['a', 'V', 8, 0.02, '', '', '', 10]], keys);
    expect(m.layout).toBe('long');
    expect(Object.fromEntries(Object.entries(m.columns).map(([c, a]) => [c, a.role]))).toEqual({ id: 'id', band: 'band', mag: 'mag', mag_err: 'mag_err', jy: 'jy', jy_err: 'jy_err', ul: 'ul', parallax_mas: 'parallax' });
  });

  it('leaves a band-named column with text in it alone, and unknown names unused', () => {
    expect(roles(['id', 'V', 'comment'], [['a', 'bright', 'x']])).toEqual({ id: 'id', V: 'ignore', comment: 'ignore' });
    expect(matchBandColumn('Teff', keys)).toBeNull();
  });
});

const table = (columns: string[], rows: (string | number | null)[][]): ColumnTable => ({ file: 'stars.csv', columns, rows, lines: rows.map((_, i) => i + 2) });

describe('applyMapping', () => {
  it('converts Gaia mean fluxes in e⁻/s to magnitudes with the DR3 Vega zero-points (Riello et al. 2021)', () => {
    // Flux, flux error and the archive's own phot_*_mean_mag for HIP 101345 in the Gaia FGK benchmark
    // table (Gaia DR3 values, Soubiran et al. 2024); the archive computes mag = −2.5 log10(flux) + ZP_Vega.
    const t = table(['id', 'phot_g_mean_flux', 'phot_g_mean_flux_error', 'phot_bp_mean_flux', 'phot_bp_mean_flux_error', 'phot_rp_mean_flux', 'phot_rp_mean_flux_error'], [
      ['HIP101345', 1.19677746e8, 70911.64, 63146550.11304578, 35391.71, 82079181.4213077, 112594.95],
    ]);
    const m = detectMapping(t.columns, t.rows, keys);
    // The conversion alone: Gaia's bright-star correction of G (G < 8, survey-rules.ts) is off here.
    const r = applyMapping(t, m, { ...m.rules, survey: { brightLimits: 'off' } }, { bandKeys: keys });
    expect(r.problems).toEqual([]);
    const byBand = Object.fromEntries(r.stars[0].measurements.map((x) => [x.bandKey, x]));
    expect(byBand.G.mag).toBeCloseTo(5.4923334, 6);
    expect(byBand.BP.mag).toBeCloseTo(5.837668, 6);
    expect(byBand.RP.mag).toBeCloseTo(4.962313, 6);
    // σ_m = 2.5/ln10 · σ_F/F (first-order propagation, common practice)
    expect(byBand.G.magErr).toBeCloseTo(1.0857362 * (70911.64 / 1.19677746e8), 9);
  });

  it('keeps 2MASS values only where the quality letter passes the rule, and records the letter', () => {
    const t = table(['id', 'j_m', 'j_msigcom', 'h_m', 'h_msigcom', 'k_m', 'k_msigcom', 'ph_qual'], [
      ['s1', 5.0, 0.02, 4.6, 0.03, 4.5, 0.02, 'ABC'],
      ['s2', 6.0, 0.02, 5.6, 0.03, 5.5, 0.02, 'AAA'],
    ]);
    const m = detectMapping(t.columns, t.rows, keys);
    const r = applyMapping(t, m, m.rules, { bandKeys: keys });
    expect(r.stars[0].measurements.map((x) => `${x.bandKey}${x.quality}`)).toEqual(['JA', 'HB']);
    expect(r.stars[1].measurements).toHaveLength(3);
    expect(r.excludedByQuality).toBe(1);
    // Without the rule everything is kept.
    expect(applyMapping(t, m, { quality: [] }, { bandKeys: keys }).stars[0].measurements).toHaveLength(3);
    // Only A: the H 'B' of s1 goes too.
    expect(applyMapping(t, m, { quality: [{ column: 'ph_qual', keep: ['A'] }] }, { bandKeys: keys }).excludedByQuality).toBe(2);
  });

  it('reports every problem with file, row and column: non-numeric value, negative error, missing id, duplicate id, ragged row', () => {
    const t = table(['id', 'V', 'V_err', 'parallax_mas'], [
      ['a', '8.1', '0.02', '10'],
      ['b', 'bright', '0.02', '10'],
      ['c', '9.0', '-0.02', '10'],
      ['', '9.0', '0.02', '10'],
      ['a', '9.0', '0.02', '10'],
      ['d', '9.0', '0.02'],
      ['e', '9.5', '0.03', ''],
    ]);
    const m = detectMapping(t.columns, t.rows, keys);
    const r = applyMapping(t, m, m.rules, { bandKeys: keys });
    expect(r.stars.map((s) => s.id)).toEqual(['a', 'e']);
    expect(r.rejectedRows).toBe(5);
    const brief = r.problems.map((p) => [p.file, p.row, p.line, p.column?.name ?? null, p.severity]);
    expect(brief).toEqual([
      ['stars.csv', 2, 3, 'V', 'error'],
      ['stars.csv', 3, 4, 'V_err', 'error'],
      ['stars.csv', 4, 5, 'id', 'error'],
      ['stars.csv', 5, 6, 'id', 'error'],
      ['stars.csv', 6, 7, null, 'error'],
    ]);
    expect(r.problems[0].message).toBe('row 2 (file line 3), column V: V magnitude "bright" is not a number');
    expect(r.problems[1].message).toMatch(/negative error -0.02/);
    expect(r.problems[2].message).toMatch(/missing star id/);
    expect(r.problems[3].message).toMatch(/duplicate star id "a" \(first in row 1\)/);
    expect(r.problems[4].message).toMatch(/has 3 values but the header has 4 columns/);
  });

  it('long format: unknown band, duplicate band, conflicting star values; a star with an error is left out whole', () => {
    const t = table(['id', 'band', 'mag', 'mag_err', 'jy', 'jy_err', 'ul', 'parallax_mas'], [
      ['a', 'V', '8.9', '0.02', '', '', '', '21'],
      ['a', 'W1', '', '', '1.2', '0.03', '', '21'],
      ['a', 'W4', '8.1', '', '', '', '1', '21'],
      ['b', 'v', '9.9', '0.02', '', '', '', '4'],
      ['b', 'G', '9.7', '0.003', '', '', '', '4'],
      ['c', 'G', '9.7', '0.003', '', '', '', '4'],
      ['c', 'G', '9.8', '0.003', '', '', '', '4'],
      ['d', 'G', '9.7', '0.003', '', '', '', '4'],
      ['d', 'Ks', '9.0', '0.02', '', '', '', '5'],
    ]);
    const m = detectMapping(t.columns, t.rows, keys);
    const r = applyMapping(t, m, m.rules, { bandKeys: keys });
    expect(r.stars.map((s) => s.id)).toEqual(['a']);
    expect(r.stars[0]).toMatchObject({ parallaxMas: 21, measurements: [{ bandKey: 'V', mag: 8.9, magErr: 0.02 }, { bandKey: 'W1', fnuJy: 1.2, fnuErrJy: 0.03 }, { bandKey: 'W4', mag: 8.1, upperLimit: true }] });
    const msgs = r.problems.map((p) => `${p.row}:${p.column?.name ?? ''}:${p.message}`);
    expect(msgs).toContain(`4:band:row 4 (file line 5), column band: unknown band "v" (band keys are case-sensitive; did you mean 'V'?)`);
    expect(msgs.some((x) => x.startsWith('7:band:') && x.includes('already has band G in row 6'))).toBe(true);
    expect(msgs.some((x) => x.startsWith('9:parallax_mas:') && x.includes('parallax 5 differs from 4'))).toBe(true);
    expect(r.rejectedRows).toBe(6);
  });

  it('reads a luminosity class (dwarf or giant, any case) and [Fe/H]; refuses another class word or an impossible [Fe/H] by row and column', () => {
    expect(roles(['id', 'lum_class', 'feh', 'V'])).toMatchObject({ lum_class: 'lum_class', feh: 'feh' });
    expect(roles(['id', 'Luminosity_Class', '[Fe/H]'])).toMatchObject({ Luminosity_Class: 'lum_class', '[Fe/H]': 'feh' });
    const t = table(['id', 'lum_class', 'feh', 'V', 'V_err'], [
      ['a', 'Giant', '-0.31', '8.9', '0.02'],
      ['b', 'dwarf', '', '9.9', '0.02'],
      ['c', '', '0.1', '9.9', '0.02'],
      ['d', 'III', '0', '9.9', '0.02'],
      ['e', 'dwarf', '12', '9.9', '0.02'],
    ]);
    const m = detectMapping(t.columns, t.rows, keys);
    const r = applyMapping(t, m, m.rules, { bandKeys: keys });
    expect(r.stars.map((s) => [s.id, s.lumClass, s.fehDex])).toEqual([['a', 'giant', -0.31], ['b', 'dwarf', undefined], ['c', undefined, 0.1]]);
    const msgs = r.problems.map((p) => `${p.row}:${p.column?.name ?? ''}:${p.message}`);
    expect(msgs).toContain('4:lum_class:row 4 (file line 5), column lum_class: luminosity class "III" is not dwarf or giant (subgiants go with dwarfs)');
    expect(msgs).toContain('5:feh:row 5 (file line 6), column feh: [Fe/H] 12 is outside -6…+1.5 dex');
    // Long format: the class is a star's, so two rows of one star must agree.
    const long = table(['id', 'band', 'mag', 'mag_err', 'lum_class'], [
      ['a', 'V', '8.9', '0.02', 'giant'],
      ['a', 'Ks', '6.1', '0.02', 'dwarf'],
    ]);
    const lm = detectMapping(long.columns, long.rows, keys);
    const lr = applyMapping(long, lm, lm.rules, { bandKeys: keys });
    expect(lr.stars).toEqual([]);
    expect(lr.problems.some((p) => p.row === 2 && p.column?.name === 'lum_class' && p.message.includes('luminosity class dwarf differs from giant'))).toBe(true);
  });

  it('long format without an error column: the bands are named once at the top, not once per row', () => {
    // 43 stars × G, BP, RP, one row each, as a Gaia DR3 query laid out one band per row; no error column.
    const rows = Array.from({ length: 43 }, (_, i) => ['G', 'BP', 'RP'].map((b, j) => [`star-${i}`, b, String(9 + j / 10 + i / 100)])).flat();
    const t = table(['id', 'band', 'mag'], [...rows, ['star-0', 'W1', '8.2']]);
    const m = detectMapping(t.columns, t.rows, keys);
    expect(m.layout).toBe('long');
    const r = applyMapping(t, m, m.rules, { bandKeys: keys });
    expect(r.problems.map((p) => [p.severity, p.row, p.column?.name, p.message])).toEqual([
      ['warning', 0, 'mag', "G, BP, RP, W1: no magnitude error column is mapped, so these bands are not used in any row (upper limits are kept); map the file's magnitude error column (such as mag_err or e_mag)"],
    ]);
    expect(r.stars).toHaveLength(43);
    expect(r.stars.every((s) => s.measurements.length === 0)).toBe(true);
  });

  it('long format with an error column: a band with no error anywhere is named once, a band missing some errors says how many and which rows', () => {
    const rows: string[][] = [];
    for (let i = 0; i < 8; i++) {
      rows.push([`s${i}`, 'V', '9.1', i === 2 || i === 5 ? '' : '0.02']);
      rows.push([`s${i}`, 'G', '9.0', '']);
      rows.push([`s${i}`, 'BP', '9.3', '']);
    }
    const t = table(['id', 'band', 'mag', 'mag_err'], rows);
    const m = detectMapping(t.columns, t.rows, keys);
    const r = applyMapping(t, m, m.rules, { bandKeys: keys });
    expect(r.problems.map((p) => [p.severity, p.row, p.column?.name, p.message])).toEqual([
      ['warning', 0, 'mag_err', 'G, BP: no row gives a magnitude error, so these bands are not used in any row (upper limits are kept); fill in the magnitude errors in column mag_err'],
      ['warning', 0, 'mag_err', 'V: 2 of 8 magnitude rows have no error (row 7 (file line 8), row 16 (file line 17)), so those values were not used'],
    ]);
    expect(r.stars.map((s) => s.measurements.map((x) => x.bandKey).join(' '))).toEqual(['V', 'V', '', 'V', 'V', '', 'V', 'V']);
  });

  it('lists the file-wide summaries before the row problems', () => {
    const t = table(['id', 'band', 'mag', 'mag_err'], [['a', 'G', 'bright', ''], ['b', 'G', '9.0', ''], ['c', 'V', '9.0', '0.1']]);
    const m = detectMapping(t.columns, t.rows, keys);
    const r = applyMapping(t, m, m.rules, { bandKeys: keys });
    expect(r.problems.map((p) => p.row)).toEqual([0, 1, 1, 1]);
    expect(r.problems[0].message).toMatch(/^G: no row gives a magnitude error/);
    expect(r.problems[1].message).toMatch(/magnitude "bright" is not a number/);
    expect(r.problems[3].message).toMatch(/star "a" was left out/);
  });

  it('refuses a mapping without an id, with an unknown band or with two value columns for one band', () => {
    const cols = ['name', 'Vmag', 'V_jy', 'X'];
    const bad: Mapping = { layout: 'wide', columns: { Vmag: { role: 'mag', band: 'V' }, V_jy: { role: 'jy', band: 'V' }, X: { role: 'mag', band: 'X' } } };
    const msgs = checkMapping(bad, cols, keys, 'f.csv').map((p) => p.message);
    expect(msgs).toContain('no column is mapped to the star id');
    expect(msgs.some((m) => m.startsWith('column X: unknown band "X"'))).toBe(true);
    expect(msgs.some((m) => m.startsWith('band V has more than one value column'))).toBe(true);
    const r = applyMapping(table(cols, [['a', 1, 1, 1]]), bad, { quality: [] }, { bandKeys: keys });
    expect(r.stars).toEqual([]);
    expect(r.errorCount).toBeGreaterThanOrEqual(3);
  });
});

describe('closestBandKey and mistyped band columns', () => {
  it('guesses the band key meant: another case, a magnitude decoration, or the one key one edit away', () => {
    expect(closestBandKey('w1', keys)).toBe('W1');
    expect(closestBandKey('KS', keys)).toBe('Ks');
    expect(closestBandKey('ksmag', keys)).toBe('Ks');
    expect(closestBandKey('RPP', keys)).toBe('RP');
    expect(closestBandKey('parallax', keys)).toBeUndefined();
    // Two one-edit neighbours (W1, W2 … from 'W5'): no guess rather than a wrong one.
    expect(closestBandKey('W5', keys)).toBeUndefined();
  });

  it('names the canonical column a mistyped band column meant, and nothing for names detection knows', () => {
    expect(mistypedBandColumn('KS', keys)).toBe('Ks');
    expect(mistypedBandColumn('KS_err', keys)).toBe('Ks_err');
    expect(mistypedBandColumn('v_jy', keys)).toBe('V_jy');
    expect(mistypedBandColumn('RPP', keys)).toBe('RP');
    for (const known of ['Vmag', 'Ks_err', 'hd', 'plx', 'band', 'notes', 'Teff', 'b', 'l']) expect(mistypedBandColumn(known, keys)).toBeUndefined();
    // Column names of the Gaia FGK benchmark table (Soubiran et al. 2024), as in the detection test above: no false alarm.
    const benchmark = ['hip', 'hd', 'ra_j2000', 'dec_j2000', 'hp_mag', 'e_hp_mag', 'ph_qual_tmass', 'j_m', 'j_msigcom', 'ks_m', 'ks_msigcom', 'ra', 'dec', 'parallax', 'parallax_error', 'l', 'b', 'logg', 'w1mpro', 'w1mpro_error', 'w4mpro', 'w4mpro_error', 'ph_qual_allwise', 'grvs_mag', 'bp_rp'];
    expect(benchmark.filter((c) => mistypedBandColumn(c, keys))).toEqual([]);
  });

  it('checkMapping warns about an unmapped column that looks like a mistyped band, and suggests a key for an unknown band', () => {
    const cols = ['id', 'V', 'V_err', 'KS'];
    const m: Mapping = { layout: 'wide', columns: { id: { role: 'id' }, V: { role: 'mag', band: 'V' }, V_err: { role: 'mag_err', band: 'V' } } };
    expect(checkMapping(m, cols, keys, 'f.csv')).toEqual([
      { file: 'f.csv', row: 0, column: { name: 'KS', number: 4 }, severity: 'warning', message: `unknown band column "KS" (band keys are case-sensitive); did you mean 'Ks'? The column was not read` },
    ]);
    // Mapped on purpose to the band it meant: no warning.
    expect(checkMapping({ layout: 'wide', columns: { ...m.columns, KS: { role: 'mag_ul', band: 'Ks' } } }, cols, keys, 'f.csv')).toEqual([]);
    const wrongBand: Mapping = { layout: 'wide', columns: { id: { role: 'id' }, V: { role: 'mag', band: 'v' } } };
    expect(checkMapping(wrongBand, ['id', 'V'], keys, 'f.csv').map((p) => p.message)).toEqual([`column V: unknown band "v" (band keys are case-sensitive; did you mean 'V'?)`]);
  });
});

describe('readCellNumber', () => {
  it('takes decimals and exponents (FITS D exponents too), treats common missing markers as empty, refuses hex and words', () => {
    expect(readCellNumber(' 1.5e3 ')).toBe(1500);
    expect(readCellNumber('2.5D-1')).toBe(0.25);
    expect(readCellNumber('-.5')).toBe(-0.5);
    for (const m of ['', 'NaN', 'null', '--', 'N/A', null, Number.NaN]) expect(readCellNumber(m)).toBeUndefined();
    for (const b of ['0x10', 'Infinity', '1,5', 'bright', true]) expect(readCellNumber(b)).toBeNaN();
  });

  it('reads exactly the decimal grammar [+-]?(d+.?d*|.d+)([eEdD][+-]?d+)? after trimming, at the edges of it too', () => {
    const read = { '1.': 1, '+7': 7, '007': 7, '1e5': 1e5, '1E-3': 1e-3, '1d3': 1000, '-2.5D+2': -250, '\t3.25\n': 3.25, '\u00a04\u00a0': 4, ' -0 ': -0 };
    for (const [text, value] of Object.entries(read)) expect(readCellNumber(text), JSON.stringify(text)).toBe(value);
    for (const b of ['.', '+', '-.', 'e5', '.e5', '1e', '1e+', '1e5.0', '1.2.3', '1 2', '1e5x', '١', '1_000', '0b1', '1ee5', '+-1', '1f']) {
      expect(readCellNumber(b), JSON.stringify(b)).toBeNaN();
    }
  });
});
