// Command-line options of `starkiln fit`, parsed with node:util parseArgs and checked into the fit's
// own option names. Mistakes raise UsageError (exit code 64, like other Unix tools' usage errors).
import { parseArgs } from 'node:util';
import type { ExtinctionLawKey } from '../core/types';

export class UsageError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'UsageError';
  }
}

export const HELP = `Usage: starkiln fit <input> -o <output> [options]

Fits a blackbody through each star's band photometry and writes a catalogue with
Teff, angular diameter, radius, luminosity and quality flags.

Input: CSV or TSV text (wide: one row per star; long: one row per star and band), a
VOTable (TABLEDATA) or a FITS binary table, told apart by their content. Columns are
recognised by name, as in the web intake: the canonical names
  id, ra, dec, parallax_mas, parallax_err_mas, distance_pc, distance_lo_pc, distance_hi_pc,
  av, and per band <key>, <key>_err (mag),
  <key>_jy, <key>_jy_err (Jy), <key>_ul, <key>_jy_ul (upper limits),
and catalogue names such as source_id, parallax, phot_g_mean_flux (Gaia, e-/s), j_m and
j_msigcom with ph_qual (2MASS), w1mpro (WISE), Vmag and e_Vmag, Plx, RA_ICRS (VizieR).
Band keys (case-sensitive): U B V R I  J H Ks  G BP RP  u g r i z  W1 W2 W3 W4  BT VT Hp  FUV NUV
Quality letters (2MASS and WISE ph_qual): by default a band's value is used only where
its letter is A or B; a U letter (and an AllWISE magnitude without an error) is an upper
limit, used as one unless it is brighter than the band's saturation limit. The catalogues'
own flags are read when present: cc_flg, cc_flags and ext_flg leave a band out, a large
corrected BP/RP excess leaves BP and RP out, RUWE above 1.4 (G 6 or fainter) flags the star.

Options:
  -o, --output <file>     catalogue to write (.csv, .ecsv or .json); "-" writes CSV to stdout
  --law <f99|ccm89|od94>  extinction law (default f99)
  --rv <R_V>              total-to-selective extinction ratio (default 3.1)
  --av <mag>              A_V for stars without an "av" value (default 0)
  --fit-av                fit A_V (bounds 0–10 mag) instead of holding it fixed
  --floor <fraction>      systematic floor added in quadrature, as a fraction of the
                          flux (default 0.02; 0 = none)
  --exclude <keys>        bands to leave out of the fit, comma or space separated
  --no-reject             keep every band: no robust rejection (default: one or two bands that
                          disagree with the others beyond their errors are left out, with the
                          reason; a test on the calibrated fit, false-rejection rate 0.1 % per star)
  --clip                  the older sequential clipping of the worst band beyond 3σ (at most two);
                          used only with --no-reject or --planck-only
  --include-long          use bands beyond ~5 µm in the fit (default: excess diagnostics only)
  --planck-only           fit a blackbody only: teff_* = tbb_* (default: the Kiln photosphere,
                          an empirical model calibrated on real stars, with the Planck fit beside it)
  --lum-class <class>     auto, dwarf or giant for stars without a lum_class column [auto: from the
                          parallax radius; dwarf, flagged class_assumed, without a parallax]
  --format <csv|ecsv|json> output format (default: from the output file's extension, else csv);
                          ECSV is read by astropy's Table.read(file) as it is, with units
  --columns <map>         say what a column holds, overriding the detection, with a name
                          Starkiln knows: "hd=id,Jmag2=J,e_Jmag2=J_err,junk=-" ("-": not used)
  --quality <col>=<letters>
                          quality letters to keep for a quality column (its name, or 2mass
                          or wise), e.g. --quality 2mass=ABC (default: A and B)
  --no-quality-rules      use every value whatever its quality letter
  --bright-limits <which> catalogue (default): leave out values brighter than the survey's
                          saturation limit (Gaia G 3, BP G 3.94, RP 3.45; 2MASS J 4.5, H 4,
                          Ks 3.5; AllWISE W1 8.1, W2 6.7, W3 3.8, W4 -0.4) in columns named as
                          the survey names them (j_m, w1mpro, phot_g_mean_flux …); all: in
                          canonical <key> columns too; off: none
  --bright-limit <key>=<mag>
                          replace one band's bright limit, e.g. --bright-limit W1=7.5
  --no-catalogue-flags    do not read cc_flg, cc_flags, ext_flg, ruwe and the BP/RP excess
  --no-native-limits      keep 2MASS U letters and AllWISE null-error magnitudes out instead
                          of reading them as upper limits
  --parallax-origin <o>   gaia_dr3, hipparcos or other: where the parallax column comes from
                          (default: from the column names)
  --parallax-zero-point <mas>
                          Gaia DR3 parallax zero-point Z, subtracted from Gaia DR3 parallaxes
                          (default -0.017; 0 = none); a distance_pc column is used as given
  --mapping <file.json>   use a saved column mapping (a preset exported from the app, or one
                          written by --save-mapping) instead of the detection
  --save-mapping <file>   write the mapping used, in the same form, for the next run
  --show-mapping          print the column mapping used to stderr
  --hdu <n|name>          FITS: the HDU holding the table (default: the first binary table)
  --quiet                 no progress bar and no summary
  -h, --help              this help
  -v, --version           software version

Problems in the input are printed as file:line:column: message (for FITS tables the
position is the table row). Good rows are fitted; the exit code is 2 when any row was
left out, 1 on a fatal error, 64 on a usage error, 0 otherwise.
`;

export interface FitCommandArgs {
  input: string;
  output: string;
  format: 'csv' | 'json' | 'ecsv';
  law: ExtinctionLawKey;
  rv: number;
  avMag: number;
  fitAv: boolean;
  floorFraction: number;
  excludeBands: string[];
  clip: boolean;
  reject: boolean;
  includeLongBands: boolean;
  planckOnly: boolean;
  lumClass: 'auto' | 'dwarf' | 'giant';
  columnMap?: Record<string, string>;
  /** --quality: letters to keep per quality column ('2mass' and 'wise' name the column by its bands). */
  qualityKeep: { column: string; letters: string[] }[];
  noQualityRules: boolean;
  brightLimits: 'catalogue' | 'all' | 'off';
  brightLimitMag: Record<string, number>;
  catalogueFlags: boolean;
  nativeUpperLimits: boolean;
  parallaxOrigin?: 'gaia_dr3' | 'hipparcos' | 'other';
  gaiaParallaxZeroPointMas: number;
  mappingFile?: string;
  saveMappingFile?: string;
  showMapping: boolean;
  hdu?: number | string;
  quiet: boolean;
}

export type ParsedCommand = { command: 'help' } | { command: 'version' } | { command: 'fit'; args: FitCommandArgs };

function number(name: string, text: string | undefined, fallback: number, check: (x: number) => boolean, rule: string): number {
  if (text === undefined) return fallback;
  const x = Number(text.trim());
  if (text.trim() === '' || !Number.isFinite(x) || !check(x)) throw new UsageError(`--${name} must be ${rule}, got "${text}"`);
  return x;
}

export function parseCommandLine(argv: string[]): ParsedCommand {
  let parsed;
  try {
    parsed = parseArgs({
      args: argv,
      allowPositionals: true,
      strict: true,
      options: {
        output: { type: 'string', short: 'o' },
        law: { type: 'string' },
        rv: { type: 'string' },
        av: { type: 'string' },
        'fit-av': { type: 'boolean' },
        floor: { type: 'string' },
        exclude: { type: 'string', multiple: true },
        clip: { type: 'boolean' },
        'no-reject': { type: 'boolean' },
        'include-long': { type: 'boolean' },
        'planck-only': { type: 'boolean' },
        'lum-class': { type: 'string' },
        format: { type: 'string' },
        columns: { type: 'string', multiple: true },
        quality: { type: 'string', multiple: true },
        'no-quality-rules': { type: 'boolean' },
        'bright-limits': { type: 'string' },
        'bright-limit': { type: 'string', multiple: true },
        'no-catalogue-flags': { type: 'boolean' },
        'no-native-limits': { type: 'boolean' },
        'parallax-origin': { type: 'string' },
        'parallax-zero-point': { type: 'string' },
        mapping: { type: 'string' },
        'save-mapping': { type: 'string' },
        'show-mapping': { type: 'boolean' },
        hdu: { type: 'string' },
        quiet: { type: 'boolean', short: 'q' },
        help: { type: 'boolean', short: 'h' },
        version: { type: 'boolean', short: 'v' },
      },
    });
  } catch (e) {
    throw new UsageError((e as Error).message.replace(/\. To specify a positional argument.*$/s, ''));
  }
  const { values: v, positionals } = parsed;
  if (v.help) return { command: 'help' };
  if (v.version) return { command: 'version' };
  const [command, ...rest] = positionals;
  if (command === undefined) throw new UsageError('no command given; the command is "fit" (see starkiln --help)');
  if (command !== 'fit') throw new UsageError(`unknown command "${command}"; the command is "fit" (see starkiln --help)`);
  if (rest.length === 0) throw new UsageError('fit needs an input file: starkiln fit <input> -o <output>');
  if (rest.length > 1) throw new UsageError(`fit takes one input file, got ${rest.length}: ${rest.join(' ')}`);
  if (!v.output) throw new UsageError('give the output file with -o <output> ("-" for stdout)');
  const law = (v.law ?? 'f99').toLowerCase();
  if (law !== 'f99' && law !== 'ccm89' && law !== 'od94') throw new UsageError(`--law must be f99, ccm89 or od94, got "${v.law}"`);
  let format: 'csv' | 'json' | 'ecsv';
  if (v.format !== undefined) {
    if (v.format !== 'csv' && v.format !== 'json' && v.format !== 'ecsv') throw new UsageError(`--format must be csv, ecsv or json, got "${v.format}"`);
    format = v.format;
  } else format = /\.json$/i.test(v.output) ? 'json' : /\.ecsv$/i.test(v.output) ? 'ecsv' : 'csv';
  const excludeBands = (v.exclude ?? []).flatMap((s) => s.split(/[\s,]+/)).filter((s) => s !== '');
  let columnMap: Record<string, string> | undefined;
  for (const spec of v.columns ?? []) {
    for (const pair of spec.split(',').map((s) => s.trim()).filter((s) => s !== '')) {
      const eq = pair.indexOf('=');
      if (eq <= 0) throw new UsageError(`--columns takes source=target pairs, got "${pair}"`);
      columnMap ??= {};
      columnMap[pair.slice(0, eq).trim()] = pair.slice(eq + 1).trim() || '-';
    }
  }
  const qualityKeep: FitCommandArgs['qualityKeep'] = [];
  for (const spec of v.quality ?? []) {
    const eq = spec.indexOf('=');
    const column = spec.slice(0, Math.max(0, eq)).trim();
    const letters = spec
      .slice(eq + 1)
      .toUpperCase()
      .split(/[\s,]*/)
      .filter((c) => c !== '');
    if (eq <= 0 || column === '' || letters.length === 0 || letters.some((c) => !/^[A-Z]$/.test(c))) {
      throw new UsageError(`--quality takes <column>=<letters to keep>, e.g. 2mass=ABC or ph_qual=A; got "${spec}"`);
    }
    qualityKeep.push({ column, letters: [...new Set(letters)] });
  }
  const brightLimits = (v['bright-limits'] ?? 'catalogue').toLowerCase();
  if (brightLimits !== 'catalogue' && brightLimits !== 'all' && brightLimits !== 'off') throw new UsageError(`--bright-limits must be catalogue, all or off, got "${v['bright-limits']}"`);
  const brightLimitMag: Record<string, number> = {};
  for (const spec of v['bright-limit'] ?? []) {
    const eq = spec.indexOf('=');
    const key = spec.slice(0, Math.max(0, eq)).trim();
    const mag = Number(spec.slice(eq + 1).trim());
    if (eq <= 0 || key === '' || spec.slice(eq + 1).trim() === '' || !Number.isFinite(mag) || mag < -30 || mag > 50) {
      throw new UsageError(`--bright-limit takes <band key>=<magnitude>, e.g. W1=7.5; got "${spec}"`);
    }
    brightLimitMag[key] = mag;
  }
  const origin = v['parallax-origin']?.toLowerCase();
  if (origin !== undefined && origin !== 'gaia_dr3' && origin !== 'hipparcos' && origin !== 'other') throw new UsageError(`--parallax-origin must be gaia_dr3, hipparcos or other, got "${v['parallax-origin']}"`);
  const lumClass = (v['lum-class'] ?? 'auto').toLowerCase();
  if (lumClass !== 'auto' && lumClass !== 'dwarf' && lumClass !== 'giant') throw new UsageError(`--lum-class must be auto, dwarf or giant, got "${v['lum-class']}"`);
  if (v['save-mapping'] !== undefined && v['save-mapping'] === v.output) throw new UsageError('--save-mapping and -o name the same file');
  let hdu: number | string | undefined;
  if (v.hdu !== undefined) hdu = /^\d+$/.test(v.hdu) ? Number(v.hdu) : v.hdu;
  return {
    command: 'fit',
    args: {
      input: rest[0],
      output: v.output,
      format,
      law,
      rv: number('rv', v.rv, 3.1, (x) => x > 0, 'a positive number'),
      avMag: number('av', v.av, 0, (x) => x >= 0, 'a number of magnitudes ≥ 0'),
      fitAv: v['fit-av'] === true,
      floorFraction: number('floor', v.floor, 0.02, (x) => x >= 0 && x < 1, 'a fraction between 0 and 1'),
      excludeBands,
      clip: v.clip === true,
      reject: v['no-reject'] !== true,
      includeLongBands: v['include-long'] === true,
      planckOnly: v['planck-only'] === true,
      lumClass,
      columnMap,
      qualityKeep,
      noQualityRules: v['no-quality-rules'] === true,
      brightLimits,
      brightLimitMag,
      catalogueFlags: v['no-catalogue-flags'] !== true,
      nativeUpperLimits: v['no-native-limits'] !== true,
      ...(origin !== undefined ? { parallaxOrigin: origin } : {}),
      gaiaParallaxZeroPointMas: number('parallax-zero-point', v['parallax-zero-point'], -0.017, (x) => Math.abs(x) < 1, 'a number of mas within ±1 (0 = none)'),
      mappingFile: v.mapping,
      saveMappingFile: v['save-mapping'],
      showMapping: v['show-mapping'] === true,
      hdu,
      quiet: v.quiet === true,
    },
  };
}
