// `starkiln fit` end to end: the real command in a child process on files in a temporary folder.
// Numbers: invented noise-free mock stars whose magnitudes come from direct integration of a
// blackbody through each band (planckBandMean, checked against synphot), not from the fit's tables;
// T and θ must come back to 1e-4 (docs/science.md, check values: self-consistency). The mocks are pure
// blackbodies, so these runs use --planck-only: they check the Planck fit, not the calibrated photosphere.
import { spawnSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { existsSync, mkdtempSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, describe, expect, it } from 'vitest';
import { mockCsv, mockStars } from '../../scripts/references/make_mock_catalogue';
import { parseDelimited } from '../core/input/delimited-stream';
import { readUpload } from '../core/input/table-file';
import { FLAG_EXPLANATIONS } from '../core/fit';
import { parseCommandLine, UsageError } from './args';
import { writeFileAtomic } from './fit-command';
import { Progress } from './progress';

const root = fileURLToPath(new URL('../..', import.meta.url));
const bin = path.join(root, 'bin/starkiln.mjs');
const dir = mkdtempSync(path.join(tmpdir(), 'starkiln-cli-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function run(...args: string[]) {
  const r = spawnSync(process.execPath, [bin, ...args], { cwd: dir, encoding: 'utf8', timeout: 60_000 });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}

function readCatalogue(file: string) {
  const t = parseDelimited(readFileSync(file, 'utf8'));
  const rows = t.rows.map((r) => Object.fromEntries(t.header.map((h, i) => [h, r[i]])));
  return { comments: t.comments, header: t.header, rows };
}

describe('options', () => {
  it('parses every option into fit options', () => {
    const p = parseCommandLine([
      'fit', 'in.csv', '-o', 'out.json', '--law', 'ccm89', '--rv', '3.6', '--av', '0.2', '--fit-av', '--floor', '0', '--exclude', 'W3, W4', '--exclude', 'u', '--clip', '--include-long', '--planck-only', '--lum-class', 'giant',
      '--columns', 'j_m=J,junk=', '--hdu', '2', '--quality', '2mass=abc', '--quality', 'ph_qual_allwise=A,B', '--no-quality-rules', '--mapping', 'preset.json', '--save-mapping', 'used.json', '--show-mapping',
      '--bright-limits', 'all', '--bright-limit', 'W1=7.5', '--no-catalogue-flags', '--no-native-limits', '--parallax-origin', 'hipparcos', '--parallax-zero-point', '0',
    ]);
    expect(p).toEqual({
      command: 'fit',
      args: {
        input: 'in.csv', output: 'out.json', format: 'json', law: 'ccm89', rv: 3.6, avMag: 0.2, fitAv: true, floorFraction: 0, excludeBands: ['W3', 'W4', 'u'], clip: true, reject: true, includeLongBands: true, planckOnly: true, lumClass: 'giant',
        columnMap: { j_m: 'J', junk: '-' }, hdu: 2, quiet: false,
        qualityKeep: [{ column: '2mass', letters: ['A', 'B', 'C'] }, { column: 'ph_qual_allwise', letters: ['A', 'B'] }],
        noQualityRules: true, mappingFile: 'preset.json', saveMappingFile: 'used.json', showMapping: true,
        brightLimits: 'all', brightLimitMag: { W1: 7.5 }, catalogueFlags: false, nativeUpperLimits: false, parallaxOrigin: 'hipparcos', gaiaParallaxZeroPointMas: 0,
      },
    });
    const d = parseCommandLine(['fit', 'in.csv', '-o', 'out.csv']);
    expect(d.command === 'fit' && [d.args.law, d.args.rv, d.args.avMag, d.args.floorFraction, d.args.format, d.args.planckOnly, d.args.lumClass]).toEqual(['f99', 3.1, 0, 0.02, 'csv', false, 'auto']);
    // The survey rules are on by default; the Gaia DR3 zero-point is −0.017 mas (Lindegren et al. 2021, from memory).
    expect(d.command === 'fit' && [d.args.brightLimits, d.args.catalogueFlags, d.args.nativeUpperLimits, d.args.parallaxOrigin, d.args.gaiaParallaxZeroPointMas]).toEqual(['catalogue', true, true, undefined, -0.017]);
    expect(parseCommandLine(['--help'])).toEqual({ command: 'help' });
  });

  it('rejects mistakes with a plain message', () => {
    const bad: [string[], RegExp][] = [
      [['fit', 'a.csv'], /give the output file with -o/],
      [['fit', '-o', 'x.csv'], /fit needs an input file/],
      [['fit', 'a.csv', '-o', 'x.csv', '--law', 'f98'], /--law must be f99, ccm89 or od94/],
      [['fit', 'a.csv', '-o', 'x.csv', '--rv=-1'], /--rv must be a positive number/],
      [['fit', 'a.csv', '-o', 'x.csv', '--floor', 'lots'], /--floor must be a fraction/],
      [['fit', 'a.csv', '-o', 'x.csv', '--bogus'], /Unknown option '--bogus'/],
      [['fits', 'a.csv'], /unknown command "fits"/],
      [['fit', 'a.csv', '-o', 'x.csv', '--quality', 'ABC'], /--quality takes <column>=<letters to keep>/],
      [['fit', 'a.csv', '-o', 'x.csv', '--quality', '2mass=A+'], /--quality takes/],
      [['fit', 'a.csv', '-o', 'x.csv', '--bright-limits', 'some'], /--bright-limits must be catalogue, all or off/],
      [['fit', 'a.csv', '-o', 'x.csv', '--bright-limit', 'W1'], /--bright-limit takes <band key>=<magnitude>/],
      [['fit', 'a.csv', '-o', 'x.csv', '--parallax-origin', 'dr2'], /--parallax-origin must be gaia_dr3, hipparcos or other/],
      [['fit', 'a.csv', '-o', 'x.csv', '--parallax-zero-point', '5'], /--parallax-zero-point must be a number of mas within ±1/],
    ];
    for (const [argv, msg] of bad) expect(() => parseCommandLine(argv), argv.join(' ')).toThrow(msg);
    expect(() => parseCommandLine(['fit', 'a.csv', '-o', 'x', '--rv', 'x'])).toThrow(UsageError);
  });
});

describe('starkiln fit, end to end', () => {
  it('recovers T and θ of mock stars to 1e-4 and writes the provenance header', () => {
    const stars = mockStars(25, 11);
    const input = path.join(dir, 'mock.csv');
    writeFileSync(input, mockCsv(stars));
    const r = run('fit', 'mock.csv', '-o', 'out.csv', '--planck-only');
    expect(r.stderr).toMatch(/starkiln: 25 stars fitted, 0 input rows left out, 0 errors and 0 warnings/);
    expect(r.code).toBe(0);
    const cat = readCatalogue(path.join(dir, 'out.csv'));
    expect(cat.header).toEqual(['id', 'ra', 'dec', 'teff_k', 'teff_err_k', 'teff_err_formal_k', 'teff_lower_k', 'tbb_k', 'tbb_err_k', 'tbb_err_formal_k', 'tbb_lower_k', 'tbb_chi2_red', 'theta_mas', 'theta_err_mas', 'radius_rsun', 'radius_err_rsun', 'lum_lsun', 'lum_err_lsun', 'fbol_cgs', 'fbol_err_cgs', 'av', 'av_err', 'chi2_red', 'n_bands', 'bands_used', 'ir_excess_sigma', 'flags', 'lum_class', 'lum_class_source', 'feh', 'model', 'residuals_sigma', 'excluded_bands', 'teff_theta_corr', 'distance_pc', 'distance_source']);
    expect(cat.rows.length).toBe(25);
    for (const [i, s] of stars.entries()) {
      const row = cat.rows[i];
      expect(row.id).toBe(s.id);
      expect(Math.abs(Number(row.teff_k) / s.teffK - 1)).toBeLessThan(1e-4);
      // Planck only: teff_* is the Planck fit and no model is named.
      expect(row.tbb_k).toBe(row.teff_k);
      expect(row.model).toBe('');
      expect(Math.abs(Number(row.theta_mas) / s.thetaMas - 1)).toBeLessThan(1e-4);
      // R/R☉ = 107.516 θ[mas]/ϖ[mas] (IAU 2015 B3 R☉, IAU 2012 au; docs/science.md §7).
      expect(Math.abs(Number(row.radius_rsun) / ((107.516 * s.thetaMas) / s.parallaxMas) - 1)).toBeLessThan(2e-4);
      // W3 (beyond ~5 µm) is a diagnostic, not a fit input, by default.
      expect(row.bands_used.split(' ').sort()).toEqual(['B', 'BP', 'G', 'H', 'J', 'Ks', 'RP', 'V', 'W1', 'W2']);
      expect(Number(row.av)).toBeCloseTo(s.avMag, 3);
    }
    const header = cat.comments.join('\n');
    const pkg = JSON.parse(readFileSync(path.join(root, 'package.json'), 'utf8'));
    expect(header).toContain(`Starkiln catalogue, software version ${pkg.version}`);
    expect(header).toMatch(/band library version: starter-\S+/);
    expect(header).toContain('CODATA 2018');
    expect(header).toContain('IAU 2015 Resolution B3');
    expect(header).toContain('extinction law: f99, R_V = 3.1');
    expect(header).toContain('options: av_default_mag = 0; fit_av = false; floor_fraction = 0.02; exclude = (none); clip = false; reject = false; include_long = false');
    expect(header).toContain(`sha256 ${createHash('sha256').update(readFileSync(input)).digest('hex')}`);
    expect(header).toMatch(/created: \d{4}-\d\d-\d\dT/);
    // F99 is defined from 910 Å to 6 µm (Fitzpatrick 1999; python3-extinction's range): of the input's
    // bands only W3 (≈ 7–17 µm) reaches past it, and the header must say so.
    expect(header).toContain("extinction law: f99, R_V = 3.1; extrapolated past the law's range in bands: W3\n");
    // Every flag code the catalogue can carry is explained in the header, not only the ones that occur.
    for (const [code, text] of Object.entries(FLAG_EXPLANATIONS)) expect(header).toContain(`  ${code}: ${text}`);
    expect(header).toMatch(/colour temperature/);
    expect(header).toContain('temperature model: Planck only (teff_* = tbb_*)');
  });

  it('applies --exclude and --law, and writes JSON', () => {
    const stars = mockStars(5, 3);
    writeFileSync(path.join(dir, 'mock-ccm.csv'), mockCsv(stars, 'ccm89', 3.1));
    const r = run('fit', 'mock-ccm.csv', '-o', 'out.json', '--planck-only', '--law', 'ccm89', '--exclude', 'B,V');
    expect(r.code).toBe(0);
    const json = JSON.parse(readFileSync(path.join(dir, 'out.json'), 'utf8'));
    expect(json.provenance.law).toBe('ccm89');
    expect(json.provenance.options.exclude).toEqual(['B', 'V']);
    // CCM89 is defined for x = 0.3–10 µm⁻¹ (1000 Å – 3.33 µm; Cardelli, Clayton & Mathis 1989): W1, W2, W3 reach past it.
    expect(json.provenance.extrapolatedBands).toEqual(['W1', 'W2', 'W3']);
    expect(json.provenance.rv).toBe(3.1);
    expect(json.rows.length).toBe(5);
    for (const [i, s] of stars.entries()) {
      expect(json.rows[i].bands_used.split(' ')).not.toContain('V');
      expect(Math.abs(json.rows[i].teff_k / s.teffK - 1)).toBeLessThan(1e-4);
    }
  });

  it('--av is the A_V of stars without an av value, --rv reaches the law, --fit-av fits it, --floor 0 drops the floor', () => {
    // Noise-free stars reddened by A_V = 0.25 under CCM89 with R_V = 3.6, built by direct integration.
    const stars = mockStars(6, 21).map((s) => ({ ...s, avMag: 0.25 }));
    const lines = mockCsv(stars, 'ccm89', 3.6).trimEnd().split('\n');
    const avAt = lines[0].split(',').indexOf('av');
    const blank = lines.map((l, i) => (i === 0 ? l : l.split(',').map((c, j) => (j === avAt ? '' : c)).join(',')));
    writeFileSync(path.join(dir, 'no-av.csv'), blank.join('\n') + '\n');
    const recovered = (file: string) => readCatalogue(path.join(dir, file)).rows.map((row, i) => Math.abs(Number(row.teff_k) / stars[i].teffK - 1));

    expect(run('fit', 'no-av.csv', '-o', 'av-default.csv', '--planck-only', '--law', 'ccm89', '--rv', '3.6', '--av', '0.25').code).toBe(0);
    for (const d of recovered('av-default.csv')) expect(d).toBeLessThan(1e-4);
    const header = readCatalogue(path.join(dir, 'av-default.csv')).comments.join('\n');
    expect(header).toContain('extinction law: ccm89, R_V = 3.6');
    expect(header).toContain('av_default_mag = 0.25');
    // Without --av the stars count as unreddened and come out 5–8 % cooler (measured); with the wrong R_V off too.
    expect(run('fit', 'no-av.csv', '-o', 'av-zero.csv', '--planck-only', '--law', 'ccm89', '--rv', '3.6').code).toBe(0);
    for (const d of recovered('av-zero.csv')) expect(d).toBeGreaterThan(1e-3);
    expect(run('fit', 'no-av.csv', '-o', 'rv-wrong.csv', '--planck-only', '--law', 'ccm89', '--av', '0.25').code).toBe(0);
    // R_V 3.1 instead of 3.6 at A_V = 0.25: 0.13–0.25 % in T on these stars (measured), far beyond 1e-4.
    expect(Math.min(...recovered('rv-wrong.csv'))).toBeGreaterThan(5e-4);

    // --fit-av finds A_V itself (1e-3 mag on noise-free stars) and reports its error.
    expect(run('fit', 'no-av.csv', '-o', 'av-fit.csv', '--planck-only', '--law', 'ccm89', '--rv', '3.6', '--fit-av').code).toBe(0);
    const fitted = readCatalogue(path.join(dir, 'av-fit.csv'));
    for (const [i, row] of fitted.rows.entries()) {
      expect(Math.abs(Number(row.av) - 0.25), row.id).toBeLessThan(1e-3);
      expect(Number(row.av_err), row.id).toBeGreaterThan(0);
      expect(Math.abs(Number(row.teff_k) / stars[i].teffK - 1)).toBeLessThan(1e-4);
    }
    expect(fitted.comments.join('\n')).toContain('fit_av = true');

    // The 2 % floor (default) is added in quadrature to the 0.02 mag errors; --floor 0 leaves them alone.
    expect(run('fit', 'no-av.csv', '-o', 'floor0.csv', '--planck-only', '--law', 'ccm89', '--rv', '3.6', '--av', '0.25', '--floor', '0').code).toBe(0);
    const floored = readCatalogue(path.join(dir, 'av-default.csv')).rows;
    for (const [i, row] of readCatalogue(path.join(dir, 'floor0.csv')).rows.entries()) {
      expect(Number(row.teff_err_formal_k)).toBeLessThan(0.8 * Number(floored[i].teff_err_formal_k));
    }
  });

  it('--clip drops a band far off the curve, lists it and recovers T', () => {
    const stars = mockStars(2, 9);
    const lines = mockCsv(stars).trimEnd().split('\n');
    const jAt = lines[0].split(',').indexOf('J');
    const cells = lines[1].split(',');
    cells[jAt] = String(Number(cells[jAt]) - 0.5); // J of the first star 0.5 mag too bright (25 σ)
    lines[1] = cells.join(',');
    writeFileSync(path.join(dir, 'clip.csv'), lines.join('\n') + '\n');
    expect(run('fit', 'clip.csv', '-o', 'noclip.csv', '--planck-only').code).toBe(0);
    const plain = readCatalogue(path.join(dir, 'noclip.csv')).rows[0];
    expect(plain.flags.split(' ')).toContain('outlier');
    expect(run('fit', 'clip.csv', '-o', 'clip-out.csv', '--planck-only', '--clip').code).toBe(0);
    const [first, second] = readCatalogue(path.join(dir, 'clip-out.csv')).rows;
    expect(first.flags.split(' ')).toContain('clipped');
    expect(first.bands_used.split(' ')).not.toContain('J');
    expect(Math.abs(Number(first.teff_k) / stars[0].teffK - 1)).toBeLessThan(1e-4);
    expect(second.flags.split(' ')).not.toContain('clipped');
    expect(second.bands_used.split(' ')).toContain('J');
  });

  it('--include-long fits W3 (12 µm) instead of keeping it as an excess diagnostic', () => {
    // W3 of the first star 1 mag too bright: a 12 µm excess (dust, a companion) on a noise-free star.
    const stars = mockStars(2, 17);
    const lines = mockCsv(stars).trimEnd().split('\n');
    const w3At = lines[0].split(',').indexOf('W3');
    const cells = lines[1].split(',');
    cells[w3At] = String(Number(cells[w3At]) - 1);
    lines[1] = cells.join(',');
    writeFileSync(path.join(dir, 'long.csv'), lines.join('\n') + '\n');

    expect(run('fit', 'long.csv', '-o', 'long-default.json', '--planck-only').code).toBe(0);
    const plain = JSON.parse(readFileSync(path.join(dir, 'long-default.json'), 'utf8'));
    expect(plain.provenance.options.include_long).toBe(false);
    for (const [i, row] of plain.rows.entries()) {
      expect(row.bands_used.split(' ')).not.toContain('W3');
      expect(Math.abs(row.teff_k / stars[i].teffK - 1)).toBeLessThan(1e-4);
    }
    expect(plain.rows[0].flags.split(' ')).toContain('ir_excess');
    expect(plain.rows[1].flags.split(' ')).not.toContain('ir_excess');

    expect(run('fit', 'long.csv', '-o', 'long-fitted.json', '--planck-only', '--include-long').code).toBe(0);
    const fitted = JSON.parse(readFileSync(path.join(dir, 'long-fitted.json'), 'utf8'));
    expect(fitted.provenance.options.include_long).toBe(true);
    for (const row of fitted.rows) expect(row.bands_used.split(' ')).toContain('W3');
    // The clean star still comes back to 1e-4; the bright W3 now pulls the first star's fit.
    expect(Math.abs(fitted.rows[1].teff_k / stars[1].teffK - 1)).toBeLessThan(1e-4);
    expect(fitted.rows[0].flags.split(' ')).not.toContain('ir_excess');
    expect(Math.abs(fitted.rows[0].teff_k / stars[0].teffK - 1)).toBeGreaterThan(1e-3);
  });

  it('reports bad rows as file:line:column, fits the good ones, exits with 2', () => {
    const stars = mockStars(3, 5);
    const lines = mockCsv(stars).trimEnd().split('\n');
    const cells = lines[2].split(',');
    cells[8] = 'bright'; // V of the second star
    lines[2] = cells.join(',');
    lines.push('cinder-000001' + lines[1].slice(lines[1].indexOf(','))); // duplicate id
    writeFileSync(path.join(dir, 'bad.csv'), lines.join('\n') + '\n');
    const r = run('fit', 'bad.csv', '-o', 'bad-out.csv');
    expect(r.code).toBe(2);
    expect(r.stderr).toContain('bad.csv:3:9: row 2 (file line 3), column V: V magnitude "bright" is not a number');
    expect(r.stderr).toContain('bad.csv:5:1: row 4 (file line 5), column id: duplicate star id "cinder-000001" (first in row 1); the row was left out');
    expect(r.stderr).toMatch(/2 stars fitted, 2 input rows left out, 2 errors/);
    const cat = readCatalogue(path.join(dir, 'bad-out.csv'));
    expect(cat.rows.map((x) => x.id)).toEqual([stars[0].id, stars[2].id]);
  });

  it('a negative error refuses that row; a band column with an unknown key is named; the other rows are fitted', () => {
    writeFileSync(
      path.join(dir, 'neg.csv'),
      'id,V,V_err,G,G_err,J,J_err,W5_jy,W5_jy_err\n' +
        'kiln-a,9.1,0.02,8.9,0.01,7.9,0.02,0.1,0.01\n' +
        'kiln-b,9.3,-0.02,9.0,0.01,8.0,0.02,0.1,0.01\n' +
        'kiln-c,9.5,0.02,9.2,0.01,8.2,0.02,0.1,0.01\n',
    );
    const r = run('fit', 'neg.csv', '-o', 'neg-out.csv');
    expect(r.code).toBe(2);
    expect(r.stderr).toContain('neg.csv:3:3: row 2 (file line 3), column V_err: negative error -0.02');
    expect(r.stderr).toContain('neg.csv:W5_jy: warning: unknown band column "W5_jy" (with W5_jy_err): "W5" is not a band key (band keys are case-sensitive: ');
    expect(r.stderr).toMatch(/2 stars fitted, 1 input row left out, 1 error and 1 warning/);
    const cat = readCatalogue(path.join(dir, 'neg-out.csv'));
    expect(cat.rows.map((x) => [x.id, x.bands_used])).toEqual([
      ['kiln-a', 'V G J'],
      ['kiln-c', 'V G J'],
    ]);
  });

  it('a band without a zero-point: its magnitude columns are left out with one warning, the other bands are fitted', () => {
    // The worker skips such a measurement the same way (src/server/fit-job.ts); a file that names
    // Hipparcos Hp (hp_mag in the benchmark table) must not cost every star its fit.
    writeFileSync(path.join(dir, 'hp.csv'), 'id,V,V_err,Ks,Ks_err,Hp,Hp_err\nkiln-a,9.1,0.02,7.5,0.02,9.0,0.01\nkiln-b,9.1,0.02,7.5,0.02,,\n');
    const r = run('fit', 'hp.csv', '-o', 'hp-out.csv');
    expect(r.code).toBe(0);
    expect(r.stderr).toContain('hp.csv:Hp: warning: columns Hp, Hp_err (band Hp) not used: band Hp has no zero-point yet; give its flux in Jy (Hp_jy)');
    expect(r.stderr).toMatch(/0 errors and 1 warning in the input/);
    const cat = readCatalogue(path.join(dir, 'hp-out.csv'));
    expect(cat.rows.map((x) => x.bands_used)).toEqual(['V Ks', 'V Ks']);
    // Left out on purpose with --exclude: no warning at all.
    const quiet = run('fit', 'hp.csv', '-o', 'hp-out.csv', '--exclude', 'Hp');
    expect(quiet.code).toBe(0);
    expect(quiet.stderr).not.toMatch(/: warning:/);
  });

  it('the benchmark FITS table with its own column names, no --columns: most stars get a Teff close to the published one', () => {
    // Gaia FGK benchmark stars v3 (Soubiran et al. 2024): 96 stars with fundamental Teff, Gaia DR3
    // fluxes, 2MASS (ph_qual_tmass) and AllWISE (ph_qual_allwise) photometry under the archives' names.
    const fits = path.resolve(root, '../shared/data/benchmark/gbs_v3_dev_half.fits');
    const r = run('fit', fits, '-o', 'gbs.csv');
    // hp_mag (Hipparcos Hp) has no zero-point in the band library yet: one warning, not 96 errors.
    expect(r.stderr).toMatch(/hp_mag: warning: columns hp_mag, e_hp_mag \(band Hp\) not used/);
    // The survey rules (src/core/input/survey-rules.ts) leave out every value brighter than its
    // survey's bright limit: on this table of bright stars most WISE values (AllWISE W1 < 8.1, W2 < 6.7,
    // WISE All-Sky Explanatory Supplement); Gaia's bright G, BP and RP are corrected by Gaia's own
    // relations (EDR3 documentation §5.5.2) instead. The 5 stars without Gaia photometry and with 2MASS
    // letters C–F are left with too few bands (measured on this table; Hipparcos Hp has no zero-point
    // yet). Each rule has a summary line with its source.
    expect(r.stderr).toMatch(/starkiln: 91 stars fitted, 5 not fitted \(few_bands 5\), 0 input rows left out, \d+ band values left out by quality rules, \d+ by survey rules, 0 errors and 13 warnings/);
    expect(r.stderr).toMatch(/warning: 21 BP values corrected for saturation by Gaia's bright-star relation \(Gaia EDR3 documentation §5\.5\.2, eq\. 5\.30\)/);
    expect(r.stderr).toMatch(/warning: 72 W1 values left out as saturated .*W1 4\.106 is brighter than the bright limit 8\.1 mag \(WISE All-Sky Explanatory Supplement/);
    expect(r.stderr).toMatch(/2 stars with Gaia RUWE above 1\.4 .* flagged possible_companion/);
    expect(r.stderr).toMatch(/34 stars brighter than G 6 with RUWE above 1\.4 not flagged/);
    // None of the AllWISE magnitudes without an error (U letters) becomes an upper limit: all are brighter than the bright limit.
    expect(r.stderr).not.toMatch(/read as upper limits/);
    expect(r.code).toBe(0);
    const cat = readCatalogue(path.join(dir, 'gbs.csv'));
    // 96 rows in the table (astropy reads the same, fixtures/fits/gbs_v3_dev_half.astropy.json).
    expect(cat.rows.length).toBe(96);
    expect(cat.rows[0].id).toBe('HIP101345');
    const ref = readUpload(new Uint8Array(readFileSync(fits)), 'gbs.fits');
    if (ref.format !== 'fits-table') throw new Error('benchmark table not read as a FITS table');
    const col = (name: string) => ref.table.columns.indexOf(name);
    const num = (row: (typeof ref.table.rows)[number], name: string) => (row[col(name)] === null || row[col(name)] === undefined ? NaN : Number(row[col(name)]));
    const byHip = new Map(
      ref.table.rows.map((row) => [
        String(row[col('hip')]),
        { teffK: Number(row[col('teff')]), tmass: String(row[col('ph_qual_tmass')] ?? ''), w1: num(row, 'w1mpro'), w2: num(row, 'w2mpro'), g: num(row, 'phot_g_mean_mag') },
      ]),
    );
    // Measured on this table: 91 of 96 stars get a Teff (5 have too few bands). HIP 19849, a lower
    // bound before the bright limits and robust rejection, fits without its saturated W1/W2.
    const fitted = cat.rows.filter((x) => x.teff_k !== '');
    expect(fitted.length).toBe(91);
    // Bright limits, checked against the table's own magnitudes: no W1 brighter than 8.1 or W2 than 6.7
    // (WISE All-Sky Explanatory Supplement, Cutri et al. 2012); BP and RP kept down to G 2 (Gaia EDR3
    // documentation §5.5.2: corrected there).
    for (const row of cat.rows) {
      const ref = byHip.get(row.id)!;
      const used = row.bands_used.split(' ');
      if (ref.w1 < 8.1) expect(used, row.id).not.toContain('W1');
      if (ref.w2 < 6.7) expect(used, row.id).not.toContain('W2');
      if (ref.g > 2 && row.teff_k !== '') expect(used, row.id).toContain('BP');
    }
    // HIP 19849: its W1 6.23 and W2 5.61 (quality A, a wrong cross-match) are saturated by the AllWISE
    // limits and never reach the fit; its Teff is then near the fundamental 5181 K.
    const hip19849 = cat.rows.find((x) => x.id === 'HIP19849')!;
    expect(hip19849.excluded_bands.split(' ')).toEqual(expect.arrayContaining(['W1:saturated', 'W2:saturated']));
    expect(Math.abs(Number(hip19849.teff_k) / byHip.get('HIP19849')!.teffK - 1)).toBeLessThan(0.03);
    for (const row of cat.rows.filter((x) => x.teff_k === '')) expect(row.flags).toMatch(/few_bands|temp_lower_bound/);
    // Quality rule: a 2MASS band reaches the fit only where its ph_qual_tmass letter is A or B.
    for (const row of cat.rows) {
      const letters = byHip.get(row.id)!.tmass;
      const used = row.bands_used.split(' ');
      ['J', 'H', 'Ks'].forEach((b, i) => {
        if (!'AB'.includes(letters.charAt(i) || '-')) expect(used, `${row.id} ${letters}`).not.toContain(b);
      });
    }
    expect(cat.rows.some((x) => x.bands_used.split(' ').includes('J'))).toBe(true);
    // docs/science.md check: median T_fit / Teff − 1 within ±3 % (a blackbody is a colour temperature).
    const ratios = fitted.map((x) => Number(x.teff_k) / byHip.get(x.id)!.teffK - 1).sort((a, b) => a - b);
    expect(Math.abs(ratios[Math.floor(ratios.length / 2)])).toBeLessThan(0.03);
    const header = cat.comments.join('\n');
    expect(header).toMatch(/input: gbs_v3_dev_half\.fits \(FITS binary table, wide layout, sha256 [0-9a-f]{64}\); 96 data rows/);
    expect(header).toContain('mapping = detected from the column names');
    expect(header).toContain('quality_rules = ph_qual_tmass keep AB ph_qual_allwise keep AB');
  });

  it('says per star what went in and why: residuals, excluded bands with reasons, the Teff–θ covariance and the distance (CSV compact, JSON in full)', () => {
    // HIP 19849 in the Gaia FGK benchmark table v3 (Soubiran et al. 2024): parallax 199.608 mas in the
    // table (Gaia DR3), so 1/ϖ = 5.00982 pc; its AllWISE W1/W2 are a wrong cross-match (issue text).
    const fits = path.resolve(root, '../shared/data/benchmark/gbs_v3_dev_half.fits');
    // With the bright limits off W1/W2 reach the fit, and robust rejection takes them out (issue: "with
    // the saturation rules switched off too").
    expect(run('fit', fits, '-o', 'gbs.json', '--quiet', '--bright-limits', 'off').code).toBe(0);
    const json = JSON.parse(readFileSync(path.join(dir, 'gbs.json'), 'utf8')) as { columns: { name: string }[]; rows: Record<string, unknown>[]; provenance: { text: string[] } };
    expect(json.columns.map((c) => c.name).slice(-5)).toEqual(['residuals_sigma', 'excluded_bands', 'teff_theta_corr', 'distance_pc', 'distance_source']);
    expect(json.provenance.text).toContain('excluded band reasons:');
    const row = json.rows.find((x) => x.id === 'HIP19849') as Record<string, unknown> & { detail: { excluded: { band: string; reason: string; detail?: string }[]; residuals_sigma: Record<string, number>; teff_theta: { covKMas: number; corr: number }; covariance: { params: string[] } } };
    expect(row.excluded_bands).toBe('J:quality_letter H:quality_letter Ks:quality_letter W1:rejected W2:rejected W3:long_wavelength W4:long_wavelength');
    const w1 = row.detail.excluded.find((e) => e.band === 'W1')!;
    expect(w1.detail).toMatch(/^inconsistent with the other bands: \d+\.\dσ below the fit made without it and W2/);
    // The compact column is the JSON's residuals rounded to 0.01σ.
    for (const part of String(row.residuals_sigma).split(' ')) {
      const [band, v] = part.split(':');
      expect(Number(v)).toBeCloseTo(row.detail.residuals_sigma[band], 2);
    }
    // cov(T, θ) = corr × σ_T × σ_θ of the reported errors; T and θ trade off (|corr| close to 1 for optical–infrared photometry, common practice).
    expect(row.detail.teff_theta.covKMas).toBeCloseTo((row.teff_theta_corr as number) * (row.teff_err_k as number) * (row.theta_err_mas as number), 6);
    expect(row.teff_theta_corr as number).toBeLessThan(-0.5);
    expect(row.distance_pc as number).toBeCloseTo(1000 / 199.6080124181338, 4);
    expect(row.distance_source).toBe('parallax');
    // With --no-reject the wrong W1/W2 stay in and the fit is fooled, as the issue reports.
    expect(run('fit', fits, '-o', 'gbs-keep.csv', '--quiet', '--no-reject', '--bright-limits', 'off').code).toBe(0);
    const kept = readCatalogue(path.join(dir, 'gbs-keep.csv')).rows.find((x) => x.id === 'HIP19849')!;
    expect(kept.bands_used.split(' ')).toEqual(expect.arrayContaining(['W1', 'W2']));
    expect(kept.teff_k === '' || Number(kept.teff_k) > 7000).toBe(true);
    expect(kept.excluded_bands).toBe('J:quality_letter H:quality_letter Ks:quality_letter W3:long_wavelength W4:long_wavelength');
  });

  it('a lum_class column beats --lum-class and a feh column is recorded, per star', () => {
    // Rough magnitudes of a K dwarf (from memory); only which class is used is checked.
    const phot = '8.2,0.02,7.9,0.003,8.4,0.003,7.3,0.004,6.5,0.02,6.0,0.02,5.9,0.02,40,0.05';
    writeFileSync(
      path.join(dir, 'classes.csv'),
      `id,lum_class,feh,V,V_err,G,G_err,BP,BP_err,RP,RP_err,J,J_err,H,H_err,Ks,Ks_err,parallax_mas,parallax_err_mas\nBrackmere,giant,-1.2,${phot}\nFennlow,,0.1,${phot}\n`,
    );
    const r = run('fit', 'classes.csv', '-o', 'classes-out.csv', '--lum-class', 'dwarf');
    expect(r.code, r.stderr).toBe(0);
    const rows = readCatalogue(path.join(dir, 'classes-out.csv')).rows;
    expect(rows.map((x) => [x.id, x.lum_class, x.lum_class_source, x.feh])).toEqual([
      ['Brackmere', 'giant', 'input', '-1.2'],
      ['Fennlow', 'dwarf', 'batch', '0.1'],
    ]);
    expect(rows[0].flags.split(' ')).toContain('feh_far');
  });

  it('usage errors exit with 64; a missing input with 1; --help and --version print', () => {
    expect(run('fit', 'nope.csv').code).toBe(64);
    const missing = run('fit', 'nope.csv', '-o', 'x.csv');
    expect(missing.code).toBe(1);
    expect(missing.stderr).toBe('starkiln: cannot read nope.csv: no such file\n');
    expect(run('fit', 'mock.csv', '-o', 'x.csv', '--exclude', 'KS').stderr).toMatch(/--exclude: unknown band "KS"; did you mean 'Ks'\?/);
    expect(run('--help').stdout).toMatch(/^Usage: starkiln fit <input> -o <output>/);
    expect(run('--version').stdout).toMatch(/^starkiln \d+\.\d+\.\d+\n$/);
  });
});

// An outside reader: astropy from Debian's python3-astropy (/usr/bin/python3), warnings as errors.
const hasAstropy = spawnSync('/usr/bin/python3', ['-c', 'import astropy'], { encoding: 'utf8' }).status === 0;

describe.runIf(hasAstropy)('starkiln fit -o out.ecsv', () => {
  it('writes an ECSV that astropy reads with Table.read(f) and no options, units and provenance included', () => {
    const stars = mockStars(12, 5);
    writeFileSync(path.join(dir, 'mock-ecsv.csv'), mockCsv(stars));
    const r = run('fit', 'mock-ecsv.csv', '-o', 'out.ecsv', '--planck-only', '--clip');
    expect(r.code).toBe(0);
    const script = [
      'import json, sys, warnings',
      'warnings.simplefilter("error")',
      'from astropy.table import Table',
      'import astropy.units as u',
      't = Table.read(sys.argv[1])',
      'print(json.dumps({"n": len(t), "ids": [str(x) for x in t["id"]], "teff": [float(x) for x in t["teff_k"]], "theta": [float(x) for x in t["theta_mas"]],',
      '  "units": {c: (t[c].unit.to_string("fits") if t[c].unit is not None else None) for c in t.colnames},',
      '  "fbol_to_cgs": (1 * t["fbol_cgs"].unit).to(u.erg / u.s / u.cm**2).value, "clip": t.meta["provenance"]["options"]["clip"], "comments": len(t.meta["comments"])}))',
    ].join('\n');
    const py = spawnSync('/usr/bin/python3', ['-c', script, path.join(dir, 'out.ecsv')], { encoding: 'utf8' });
    expect(py.stderr).toBe('');
    expect(py.status).toBe(0);
    const out = JSON.parse(py.stdout) as { n: number; ids: string[]; teff: number[]; theta: number[]; units: Record<string, string | null>; fbol_to_cgs: number; clip: boolean; comments: number };
    expect(out.n).toBe(12);
    expect(out.ids).toEqual(stars.map((s) => s.id));
    for (const [i, s] of stars.entries()) {
      expect(Math.abs(out.teff[i] / s.teffK - 1)).toBeLessThan(1e-4);
      expect(Math.abs(out.theta[i] / s.thetaMas - 1)).toBeLessThan(1e-4);
    }
    expect(out.units).toMatchObject({ teff_k: 'K', theta_mas: 'mas', ra: 'deg', av: 'mag' });
    expect(out.fbol_to_cgs).toBeCloseTo(1, 12);
    expect(out.clip).toBe(true);
    expect(out.comments).toBeGreaterThan(10);
  });
});

describe('progress bar', () => {
  const sink = (columns = 80) => {
    const chunks: string[] = [];
    return { out: { columns, write: (c: string) => (chunks.push(c), true) } as unknown as NodeJS.WritableStream & { columns?: number }, chunks };
  };

  it('draws a bar with the count on a terminal and ends the line when done', () => {
    const { out, chunks } = sink();
    const p = new Progress(out, 1000, true);
    p.update(500);
    p.done();
    expect(chunks[0]).toMatch(/^\r\[#{20}-{20}\] 500\/1000 stars ~\d+ s left {3}$/);
    expect(chunks.at(-2)).toBe(`\r[${'#'.repeat(40)}] 1000/1000 stars   `);
    expect(chunks.at(-1)).toBe('\n');
  });

  it('redraws at most ten times a second, and writes nothing when stderr is not a terminal', () => {
    const { out, chunks } = sink();
    const p = new Progress(out, 1000, true);
    for (let i = 0; i < 1000; i++) p.update(i);
    expect(chunks.length).toBe(1);
    const off = sink();
    const q = new Progress(off.out, 1000, false);
    q.update(10);
    q.done();
    expect(off.chunks).toEqual([]);
  });
});

describe('atomic output', () => {
  it('a failure while writing leaves the old file untouched and no temporary file behind', () => {
    const target = path.join(dir, 'atomic.csv');
    writeFileSync(target, 'old content\n');
    function* failing() {
      yield 'id,teff_k\n';
      yield 'a,5000\n';
      throw new Error('disk full');
    }
    expect(() => writeFileAtomic(target, failing())).toThrow('disk full');
    expect(readFileSync(target, 'utf8')).toBe('old content\n');
    expect(readdirSync(dir).filter((f) => f.includes('atomic.csv') && f !== 'atomic.csv')).toEqual([]);
    writeFileAtomic(target, ['new\n']);
    expect(readFileSync(target, 'utf8')).toBe('new\n');
  });

  it('the command writes nothing when the output folder does not exist', () => {
    writeFileSync(path.join(dir, 'one.csv'), 'id,V,V_err,Ks,Ks_err\nx,9,0.02,7,0.02\n');
    const r = run('fit', 'one.csv', '-o', 'missing-folder/out.csv');
    expect(r.code).toBe(1);
    expect(r.stderr).toMatch(/cannot write missing-folder\/out\.csv/);
    expect(existsSync(path.join(dir, 'missing-folder'))).toBe(false);
  });
});
