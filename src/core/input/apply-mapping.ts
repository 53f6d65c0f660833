// Applying a mapping to every row: stars with measurements, and every problem with file, row and
// column.
import type { Measurement } from '../types';
import { BAND_ROLES, type ColumnRole, type ColumnTable, type Mapping, type MappedStar, type MappingProblem, type MappingResult, type MappingRules, type TableCell } from './column-table';

export type { MappedStar } from './column-table';
import { FALSE_FLAGS, readCellNumber, textOf, TRUE_FLAGS } from './cells';
import { checkMapping } from './check-mapping';
import { closestBandKey } from './column-names';
import { GAIA_VEGA_ZERO_POINT_MAG, MAG_PER_LN } from './gaia-zero-points';
import { shownText } from './limits';
import { starIdProblem } from './star-id';
import {
  BP_RP_EXCESS_NSIGMA,
  bpRpExcessSigma,
  brightLimitFor,
  confusionLeftOut,
  correctedBpRpExcess,
  GAIA_BRIGHT_CORRECTION_RANGE,
  gaiaBrightCorrection,
  isCanonicalValueColumn,
  RUWE_BRIGHT_G,
  RUWE_MAX,
  SURVEY_BANDS,
  type LeftOutReason,
  type LeftOutValue,
} from './survey-rules';

export interface ApplyOptions {
  bandKeys: readonly string[];
}

interface BandCols {
  mag?: number;
  mag_err?: number;
  jy?: number;
  jy_err?: number;
  mag_ul?: number;
  jy_ul?: number;
  gaia_flux?: number;
  gaia_flux_err?: number;
  /** quality column and letter position */
  quality?: { col: number; pos: number; single: boolean };
  /** contamination letters (cc_flg, cc_flags) and letter position */
  confusion?: { col: number; pos: number; single: boolean };
  /** AllWISE ext_flg column */
  extended?: number;
}

const STAR_PROPS = {
  ra: 'raDeg',
  dec: 'decDeg',
  parallax: 'parallaxMas',
  parallax_err: 'parallaxErrMas',
  av: 'avMag',
  feh: 'fehDex',
  distance: 'distancePc',
  distance_lo: 'distanceLoPc',
  distance_hi: 'distanceHiPc',
} as const;
type StarRole = keyof typeof STAR_PROPS;
const STAR_WORDS: Record<StarRole, string> = {
  ra: 'right ascension',
  dec: 'declination',
  parallax: 'parallax',
  parallax_err: 'parallax error',
  av: 'A_V',
  feh: '[Fe/H]',
  distance: 'distance',
  distance_lo: 'distance lower end',
  distance_hi: 'distance upper end',
};
/**
 * [Fe/H] of real stars lies within about −5…+1 dex (the most metal-poor stars known are near −5
 * or below, the richest near +0.6; from memory): a value beyond is a unit or column mistake.
 */
export const FEH_RANGE = { min: -6, max: 1.5 } as const;
/** Cell words taken as a luminosity class (case-insensitive). Subgiants go with the dwarfs (decision 0022). */
const LUM_CLASS_WORDS: Record<string, 'dwarf' | 'giant'> = { dwarf: 'dwarf', giant: 'giant' };

/**
 * Magnitudes outside this range are not a star's (the Sun is −26.7 in V; the faintest sources any
 * survey catalogues are near 30): a value beyond is a unit or column mistake, or a hostile file.
 */
export const MAG_RANGE = { min: -30, max: 50 } as const;

/** A long-format star while its rows arrive: its values so far, and the row of each band. */
export interface LongStar extends MappedStar {
  bad: boolean;
  rows: number;
  bandRow: Record<string, number>;
  /** File line of its first row, when the format has lines. */
  line?: number;
}

/**
 * Where the mapper keeps what it must remember across rows: the first row of every star id (wide
 * tables: duplicates), the stars found good, and the long-format stars being assembled. In memory
 * for applyMapping; in a SQLite file for the intake job, so memory does not grow with the rows.
 */
export interface MapperStore {
  /** The first row of `id` when it was seen before; otherwise remembers `row` and returns undefined. */
  firstRow(id: string, row: number): number | undefined;
  addStar(star: MappedStar): void;
  getLong(id: string): LongStar | undefined;
  putLong(star: LongStar): void;
  /** Every long-format star in order of its first row. */
  eachLong(fn: (star: LongStar) => void): void;
}

/** Where problems go; `add` sees every problem in order (the caller may keep only the first ones). */
export interface ProblemSink {
  add(p: MappingProblem): void;
}

export class MemoryStore implements MapperStore {
  readonly stars: MappedStar[] = [];
  private readonly first = new Map<string, number>();
  private readonly long = new Map<string, LongStar>();
  firstRow(id: string, row: number): number | undefined {
    const prior = this.first.get(id);
    if (prior === undefined) this.first.set(id, row);
    return prior;
  }
  addStar(star: MappedStar): void {
    this.stars.push(star);
  }
  getLong(id: string): LongStar | undefined {
    return this.long.get(id);
  }
  putLong(star: LongStar): void {
    this.long.set(star.id, star);
  }
  eachLong(fn: (star: LongStar) => void): void {
    for (const s of this.long.values()) fn(s);
  }
}

export interface RowCounts {
  rowCount: number;
  rejectedRows: number;
  excludedByQuality: number;
  /** Values left out by the survey rules (saturation, contamination flags, BP/RP excess). */
  leftOutBySurveyRules: number;
  /** Values that became upper limits by the catalogue's own convention (2MASS U, AllWISE null error). */
  nativeUpperLimits: number;
  /** Stars flagged possible_companion (RUWE). */
  possibleCompanions: number;
}

/**
 * The mapping applied one row at a time: `row` for each data row in file order, then `finish`.
 * Stars go to the store, problems (file, row, column) to the sink. A star with an error in any of
 * its rows is left out whole; the others carry on, so the caller can import the valid rows and keep
 * the report. When the mapping itself has errors (`refused`), rows are only counted.
 */
export class RowMapper {
  readonly refused: boolean;
  private rowCount = 0;
  private rejected = 0;
  private excluded = 0;
  private bySurvey = 0;
  private nativeLimits = 0;
  private companions = 0;
  private readonly rowFn: (cells: TableCell[], line: number | undefined) => void;
  private readonly finishFn: () => void;

  constructor(
    columns: readonly string[],
    file: string,
    mapping: Mapping,
    rules: MappingRules,
    options: ApplyOptions,
    private readonly store: MapperStore,
    sink: ProblemSink,
  ) {
    const { bandKeys } = options;
    let fatal = false;
    const push = (p: MappingProblem) => {
      if (p.severity === 'error') fatal = true;
      sink.add(p);
    };
    for (const p of checkMapping(mapping, columns, bandKeys, file)) push(p);
    const colIndex = new Map(columns.map((c, i) => [c, i] as const));
    const noop = () => undefined;
    if (fatal) {
      this.refused = true;
      this.rowFn = () => void this.rejected++;
      this.finishFn = noop;
      return;
    }
    const roleCol = (role: ColumnRole): number | undefined => {
      const e = Object.entries(mapping.columns).find(([, a]) => a.role === role);
      return e ? colIndex.get(e[0]) : undefined;
    };
    const idCol = roleCol('id')!;
    const starCols: Partial<Record<StarRole, number>> = {};
    for (const r of Object.keys(STAR_PROPS) as StarRole[]) {
      const c = roleCol(r);
      if (c !== undefined) starCols[r] = c;
    }
    // Quality rules by column.
    const keepByCol = new Map<number, Set<string>>();
    for (const rule of rules.quality) {
      const c = colIndex.get(rule.column);
      if (c === undefined) {
        push({ file, row: 0, severity: 'error', message: `the quality rule names column "${rule.column}", which the file does not have` });
        continue;
      }
      if (mapping.columns[rule.column]?.role !== 'quality') {
        push({ file, row: 0, column: { name: rule.column, number: c + 1 }, severity: 'error', message: `the quality rule on ${rule.column} needs that column mapped to quality letters` });
        continue;
      }
      keepByCol.set(c, new Set(rule.keep.map((k) => k.trim().toUpperCase())));
    }
    if (fatal) {
      this.refused = true;
      this.rowFn = () => void this.rejected++;
      this.finishFn = noop;
      return;
    }
    this.refused = false;

    const bandCols = new Map<string, BandCols>();
    const band = (key: string) => {
      if (!bandCols.has(key)) bandCols.set(key, {});
      return bandCols.get(key)!;
    };
    for (const [name, a] of Object.entries(mapping.columns)) {
      const c = colIndex.get(name)!;
      if (a.role === 'quality' || a.role === 'confusion') {
        a.bands!.forEach((b, pos) => {
          if (b !== '-') band(b)[a.role as 'quality' | 'confusion'] = { col: c, pos, single: a.bands!.length === 1 };
        });
      } else if (a.role === 'extended') {
        for (const b of a.bands!) if (b !== '-') band(b).extended = c;
      } else if (mapping.layout === 'wide' && a.band && BAND_ROLES.includes(a.role)) {
        (band(a.band) as Record<string, number>)[a.role] = c;
      }
    }

    // A band whose value column has no error column beside it cannot be used in any row: said once,
    // at the top of the report, naming the bands, instead of once per row.
    const noErrorColumn = [...bandCols]
      .filter(([, b]) => (b.mag !== undefined && b.mag_err === undefined) || (b.jy !== undefined && b.jy_err === undefined) || (b.gaia_flux !== undefined && b.gaia_flux_err === undefined))
      .map(([key, b]) => ({ key, col: (b.mag ?? b.jy ?? b.gaia_flux)! }));
    if (noErrorColumn.length > 0) {
      const first = noErrorColumn[0];
      push({
        file,
        row: 0,
        column: { name: columns[first.col], number: first.col + 1 },
        severity: 'warning',
        message: `${noErrorColumn.map((b) => b.key).join(', ')}: no error column is mapped, so ${noErrorColumn.length === 1 ? 'this band is' : 'these bands are'} not used in any row; map each band's error column (such as ${first.key}_err or e_${first.key})`,
      });
    }

    const ncol = columns.length;
    const cur = { row: 0, line: undefined as number | undefined, cells: [] as TableCell[], bad: false };
    const problem = (col: number | undefined, message: string, severity: 'error' | 'warning' = 'error') => {
      sink.add({
        file,
        row: cur.row,
        line: cur.line,
        column: col === undefined ? undefined : { name: columns[col], number: col + 1 },
        severity,
        message: `row ${cur.row}${cur.line === undefined ? '' : ` (file line ${cur.line})`}${col === undefined ? '' : `, column ${columns[col]}`}: ${message}`,
      });
      if (severity === 'error') cur.bad = true;
    };
    /** The cell as a number; `what` (prefixed by `key` when given) names it in the problem, built only then. */
    const num = (col: number | undefined, what: string, key?: string): number | undefined => {
      if (col === undefined) return undefined;
      const x = readCellNumber(cur.cells[col]);
      if (x !== undefined && !Number.isFinite(x)) {
        const text = shownText(textOf(cur.cells[col]));
        problem(col, `${key === undefined ? what : `${key} ${what}`} "${text}" is ${Number.isNaN(x) ? 'not a number' : 'not a finite number (too large for a double)'}`);
        return undefined;
      }
      return x;
    };
    /** A magnitude (value or upper limit) inside MAG_RANGE. */
    const magnitude = (col: number | undefined, value: number | undefined, what: string): number | undefined => {
      if (value === undefined || (value >= MAG_RANGE.min && value <= MAG_RANGE.max)) return value;
      problem(col, `${what} ${value} is outside ${MAG_RANGE.min}…${MAG_RANGE.max} mag`);
      return undefined;
    };
    const nonNegative = (col: number | undefined, value: number | undefined, what: string) => {
      if (value !== undefined && value < 0) problem(col, `negative ${what} ${value}`);
    };
    /** true when the band's value may be used under the quality rules */
    const qualityOf = (key: string): { keep: boolean; letter?: string } => {
      const q = bandCols.get(key)?.quality;
      if (!q) return { keep: true };
      const text = textOf(cur.cells[q.col]);
      const letter = q.single ? text : text.charAt(q.pos);
      const keep = keepByCol.get(q.col);
      if (!keep) return { keep: true, letter: letter || undefined };
      return { keep: letter !== '' && keep.has(letter.toUpperCase()), letter: letter || undefined };
    };

    const starRoles = Object.keys(starCols) as StarRole[];
    const lumClassCol = roleCol('lum_class');
    const readLumClass = (star: MappedStar, mergeWithin: boolean) => {
      if (lumClassCol === undefined) return;
      const text = textOf(cur.cells[lumClassCol]);
      if (text === '') return;
      const cls = LUM_CLASS_WORDS[text.toLowerCase()];
      if (!cls) {
        problem(lumClassCol, `luminosity class "${shownText(text)}" is not dwarf or giant (subgiants go with dwarfs)`);
        return;
      }
      if (mergeWithin && star.lumClass !== undefined && star.lumClass !== cls) problem(lumClassCol, `luminosity class ${cls} differs from ${star.lumClass} given for star "${star.id}" in an earlier row`);
      else star.lumClass = cls;
    };
    /** The distance interval must hold the distance (lo ≤ d ≤ hi). */
    const checkDistance = (star: MappedStar) => {
      const d = star.distancePc;
      if (d === undefined) return;
      if (star.distanceLoPc !== undefined && star.distanceLoPc > d) problem(starCols.distance_lo, `distance lower end ${star.distanceLoPc} pc is above the distance ${d} pc`);
      if (star.distanceHiPc !== undefined && star.distanceHiPc < d) problem(starCols.distance_hi, `distance upper end ${star.distanceHiPc} pc is below the distance ${d} pc`);
    };
    const readStarValues = (star: MappedStar, mergeWithin: boolean) => {
      readLumClass(star, mergeWithin);
      for (let j = 0; j < starRoles.length; j++) {
        const r = starRoles[j];
        const c = starCols[r]!;
        const v = num(c, STAR_WORDS[r]);
        if (v === undefined) continue;
        if (r === 'ra' && (v < 0 || v >= 360)) problem(c, `right ascension ${v} is outside 0 ≤ ra < 360 degrees`);
        if (r === 'dec' && (v < -90 || v > 90)) problem(c, `declination ${v} is outside −90…90 degrees`);
        if (r === 'parallax_err' || r === 'av') nonNegative(c, v, r === 'av' ? 'A_V' : 'parallax error');
        if (r === 'feh' && (v < FEH_RANGE.min || v > FEH_RANGE.max)) problem(c, `[Fe/H] ${v} is outside ${FEH_RANGE.min}…+${FEH_RANGE.max} dex`);
        if ((r === 'distance' || r === 'distance_lo' || r === 'distance_hi') && !(v > 0)) {
          problem(c, `${STAR_WORDS[r]} ${v} pc must be positive`);
          continue;
        }
        const prop = STAR_PROPS[r];
        if (mergeWithin && star[prop] !== undefined && star[prop] !== v) problem(c, `${STAR_WORDS[r]} ${v} differs from ${star[prop]} given for star "${star.id}" in an earlier row`);
        else star[prop] = v;
      }
    };

    /** Makes the next row current; its star id, or null when the row is ragged or has no id (both reported). */
    const beginRow = (cells: TableCell[], line: number | undefined): string | null => {
      cur.row = this.rowCount;
      cur.line = line;
      cur.cells = cells;
      cur.bad = false;
      if (cells.length !== ncol) {
        problem(undefined, `has ${cells.length} value${cells.length === 1 ? '' : 's'} but the header has ${ncol} columns; the row was left out`);
        return null;
      }
      const id = textOf(cells[idCol]);
      if (id === '') {
        problem(idCol, 'missing star id; the row was left out');
        return null;
      }
      const bad = starIdProblem(id);
      if (bad) {
        problem(idCol, `${bad}; the row was left out`);
        return null;
      }
      return id;
    };


    // ---- The survey rules (survey-rules.ts, decision 0028), after a row's values are read.
    const survey = rules.survey ?? {};
    const brightMode = survey.brightLimits ?? 'catalogue';
    const flagsOn = survey.catalogueFlags !== false;
    const nativeUl = survey.nativeUpperLimits !== false;
    /** Bands whose value column is named as a survey names it (not the canonical `<band>`). */
    const catalogueNamed = new Set<string>();
    for (const [key, b] of bandCols) {
      const col = b.mag ?? b.gaia_flux ?? b.mag_ul;
      if (col !== undefined && !isCanonicalValueColumn(columns[col], key)) catalogueNamed.add(key);
    }
    const ruweCol = roleCol('ruwe');
    const excessCol = roleCol('bp_rp_excess');
    const parallaxCol = roleCol('parallax');
    const parallaxOrigin = survey.parallaxOrigin ?? (parallaxCol === undefined ? undefined : mapping.columns[columns[parallaxCol]]?.origin) ?? 'other';
    const summary = new LeftOutSummary(file);
    const letterAt = (q: { col: number; pos: number; single: boolean }) => {
      const text = textOf(cur.cells[q.col]);
      return q.single ? text : text.charAt(q.pos);
    };
    const fmt = (x: number) => String(Number(x.toFixed(3)));
    const applySurveyRules = (star: MappedStar, candidates: Candidate[], leftOut: LeftOutValue[]) => {
      if (star.parallaxMas !== undefined) star.parallaxOrigin = parallaxOrigin;
      const magOf = (key: string) => candidates.find((c) => c.key === key && c.m.mag !== undefined && !c.m.upperLimit)?.m.mag;
      // Gaia's own bright-star corrections (survey-rules.ts) move the values the fit gets. The bright
      // limits and the flux-excess test below keep to the catalogue's own magnitudes (`raw`), since the
      // relations' ranges and the excess are stated on those; brighter than a relation's range the
      // bright limit leaves the value out.
      const raw = { G: magOf('G'), BP: magOf('BP'), RP: magOf('RP') };
      /** The catalogue's value of each corrected candidate. */
      const corrected = new Map<Candidate, number>();
      if (brightMode !== 'off') {
        for (const c of candidates) {
          if (SURVEY_BANDS[c.key] !== 'Gaia' || c.m.mag === undefined || c.m.upperLimit || !(brightMode === 'all' || c.catalogue)) continue;
          const band = c.key as 'G' | 'BP' | 'RP';
          const on = raw[GAIA_BRIGHT_CORRECTION_RANGE[band].on];
          const d = on === undefined ? undefined : gaiaBrightCorrection(band, on);
          if (d === undefined || d === 0) continue;
          summary.corrected(band, `${band} ${fmt(c.m.mag)} → ${fmt(c.m.mag + d)}`, cur.row, cur.line);
          corrected.set(c, c.m.mag);
          c.m.mag += d;
        }
      }
      const g = magOf('G');
      let excessOut: string | undefined;
      if (flagsOn && excessCol !== undefined) {
        const c = num(excessCol, 'BP/RP excess factor');
        // The excess test (Riello et al. 2021) is stated on the catalogue's own values, so it takes the
        // uncorrected magnitudes; where BP needs its saturation correction the factor itself comes from
        // saturated fluxes and says nothing of contamination: not tested, counted in one report line.
        if (c !== undefined && raw.G !== undefined && raw.BP !== undefined && raw.RP !== undefined) {
          if (raw.G < GAIA_BRIGHT_CORRECTION_RANGE.BP.to) summary.excessTooBright(cur.row, cur.line);
          else {
            const cStar = correctedBpRpExcess(c, raw.BP - raw.RP);
            const sigma = bpRpExcessSigma(raw.G);
            if (Math.abs(cStar) > BP_RP_EXCESS_NSIGMA * sigma) {
              excessOut = `corrected BP/RP flux excess C* = ${fmt(cStar)} is beyond ${BP_RP_EXCESS_NSIGMA}σ (σ = ${fmt(sigma)} at G ${fmt(raw.G)}; Riello et al. 2021): BP and RP hold light from elsewhere`;
            }
          }
        }
      }
      if (flagsOn && ruweCol !== undefined) {
        const ruwe = num(ruweCol, 'RUWE');
        // Read: the star is then not a possible companion unless the rule says so (an import stores this).
        if (ruwe !== undefined) star.possibleCompanion = false;
        if (ruwe !== undefined && ruwe > RUWE_MAX) {
          if (g === undefined || g >= RUWE_BRIGHT_G) {
            star.possibleCompanion = true;
            this.companions++;
            summary.companion(cur.row, cur.line);
          } else summary.ruweTooBright(cur.row, cur.line);
        }
      }
      const out = (c: Candidate, reason: LeftOutReason, detail: string) => {
        leftOut.push({ bandKey: c.key, reason, detail });
        this.bySurvey++;
        summary.note(c.key, reason, detail, cur.row, cur.line);
      };
      for (const c of candidates) {
        const m = c.m;
        if (m.mag !== undefined && (c.native || (brightMode !== 'off' && (brightMode === 'all' || c.catalogue)))) {
          const limit = brightLimitFor(c.key, survey);
          // On the catalogue's own magnitudes, as the corrections' ranges are (BP's limit is on G).
          const own = corrected.get(c) ?? m.mag;
          const on = limit?.onBand ? (raw[limit.onBand as keyof typeof raw] ?? own) : own;
          if (limit && on < limit.mag) {
            const what = c.native ? `${fmt(own)} (a native upper limit)` : fmt(own);
            out(c, 'saturated', `${c.key} ${what}${limit.onBand && limit.onBand !== c.key ? ` with ${limit.onBand} ${fmt(on)}` : ''} is brighter than the bright limit ${limit.onBand && limit.onBand !== c.key ? `${limit.onBand} ` : ''}${limit.mag} mag (${limit.source})`);
            continue;
          }
        }
        if (flagsOn) {
          const b = bandCols.get(c.key)!;
          const cc = b.confusion ? letterAt(b.confusion) : '';
          if (confusionLeftOut(cc)) {
            out(c, 'catalogue_flag', `contamination letter ${cc} in ${columns[b.confusion!.col]} (only 0, clean, is used)`);
            continue;
          }
          if (b.extended !== undefined) {
            const ext = readCellNumber(cur.cells[b.extended]);
            if (ext !== undefined && Number.isFinite(ext) && ext > 0) {
              out(c, 'catalogue_flag', `extended source: ${columns[b.extended]} = ${ext} (the profile-fit magnitude assumes a point source)`);
              continue;
            }
          }
          if (excessOut && (c.key === 'BP' || c.key === 'RP')) {
            out(c, 'bp_rp_excess', excessOut);
            continue;
          }
        }
        if (c.native) {
          this.nativeLimits++;
          summary.nativeLimit(c.key, cur.row, cur.line);
        }
        star.measurements.push(m);
      }
      if (leftOut.length > 0) star.leftOut = leftOut;
    };

    if (mapping.layout === 'wide') {
      // An array, not the Map: iterating a Map makes a fresh [key, value] pair per band and row.
      const bandList = [...bandCols].map(([key, cols]) => ({ key, cols }));
      this.rowFn = (cells, line) => {
        const id = beginRow(cells, line);
        if (id === null) {
          this.rejected++;
          return;
        }
        const prior = store.firstRow(id, cur.row);
        if (prior !== undefined) {
          problem(idCol, `duplicate star id "${id}" (first in row ${prior}); the row was left out`);
          this.rejected++;
          return;
        }
        const star: MappedStar = { id, measurements: [], row: cur.row };
        const candidates: Candidate[] = [];
        const leftOut: LeftOutValue[] = [];
        readStarValues(star, false);
        checkDistance(star);
        for (let j = 0; j < bandList.length; j++) {
          const key = bandList[j].key;
          const b = bandList[j].cols;
          const mag = magnitude(b.mag, num(b.mag, 'magnitude', key), `${key} magnitude`);
          const magErr = num(b.mag_err, 'magnitude error', key);
          const jy = num(b.jy, 'flux', key);
          const jyErr = num(b.jy_err, 'flux error', key);
          const magUl = magnitude(b.mag_ul, num(b.mag_ul, 'upper limit', key), `${key} upper limit`);
          const jyUl = num(b.jy_ul, 'upper limit', key);
          const gFlux = num(b.gaia_flux, 'Gaia flux', key);
          const gFluxErr = num(b.gaia_flux_err, 'Gaia flux error', key);
          nonNegative(b.mag_err, magErr, 'error');
          nonNegative(b.jy_err, jyErr, 'error');
          nonNegative(b.gaia_flux_err, gFluxErr, 'error');
          const given = (mag !== undefined ? 1 : 0) + (jy !== undefined ? 1 : 0) + (magUl !== undefined ? 1 : 0) + (jyUl !== undefined ? 1 : 0) + (gFlux !== undefined ? 1 : 0);
          if (given === 0) continue;
          if (given > 1) {
            problem(b.mag ?? b.jy ?? b.gaia_flux ?? b.mag_ul ?? b.jy_ul, `band ${key} has both a value and an upper limit; keep one`);
            continue;
          }
          const q = qualityOf(key);
          // 2MASS and AllWISE write U for a magnitude that is a 95 % upper limit: a limit, not a value to drop.
          const nativeU = nativeUl && q.letter?.toUpperCase() === 'U' && mag !== undefined && SURVEY_BANDS[key] !== undefined;
          if (!q.keep && !nativeU) {
            this.excluded++;
            const qc = bandCols.get(key)!.quality!;
            leftOut.push({ bandKey: key, reason: 'quality_letter', detail: `quality letter ${q.letter ?? '(none)'} in ${columns[qc.col]} (kept: ${[...(keepByCol.get(qc.col) ?? [])].join('')})` });
            continue;
          }
          const quality = q.letter ? { quality: q.letter } : {};
          if (mag !== undefined) {
            // AllWISE gives no w?sigmpro where w?mpro is a 95 % upper limit (Explanatory Supplement, column descriptions).
            const nullErrorLimit = nativeUl && magErr === undefined && catalogueNamed.has(key) && SURVEY_BANDS[key] === 'AllWISE';
            if (nativeU || nullErrorLimit) candidates.push({ key, m: { bandKey: key, mag, upperLimit: true, ...quality }, native: true, catalogue: catalogueNamed.has(key) });
            else if (magErr === undefined) {
              if (b.mag_err !== undefined) problem(b.mag_err, `band ${key} has a magnitude but no error; the value was not used`, 'warning');
            } else candidates.push({ key, m: { bandKey: key, mag, magErr, ...quality }, native: false, catalogue: catalogueNamed.has(key) });
          } else if (jy !== undefined) {
            if (jyErr === undefined) {
              if (b.jy_err !== undefined) problem(b.jy_err, `band ${key} has a flux but no error; the value was not used`, 'warning');
            } else if (jy <= 0) problem(b.jy, `flux ${jy} Jy must be positive (give a negative detection as an upper limit)`);
            else candidates.push({ key, m: { bandKey: key, fnuJy: jy, fnuErrJy: jyErr, ...quality }, native: false, catalogue: false });
          } else if (gFlux !== undefined) {
            if (gFlux <= 0) problem(b.gaia_flux, `Gaia flux ${gFlux} e⁻/s must be positive`);
            else if (gFluxErr === undefined) {
              if (b.gaia_flux_err !== undefined) problem(b.gaia_flux_err, `band ${key} has a Gaia flux but no error; the value was not used`, 'warning');
            } else {
              const m = magnitude(b.gaia_flux, -2.5 * Math.log10(gFlux) + GAIA_VEGA_ZERO_POINT_MAG[key], `${key} from the Gaia flux ${gFlux} e⁻/s,`);
              if (m !== undefined) candidates.push({ key, m: { bandKey: key, mag: m, magErr: MAG_PER_LN * (gFluxErr / gFlux), ...quality }, native: false, catalogue: true });
            }
          } else if (magUl !== undefined) {
            candidates.push({ key, m: { bandKey: key, mag: magUl, upperLimit: true, ...quality }, native: false, catalogue: catalogueNamed.has(key) });
          } else if (jyUl !== undefined) {
            if (jyUl <= 0) problem(b.jy_ul, `upper-limit flux ${jyUl} Jy must be positive`);
            else candidates.push({ key, m: { bandKey: key, fnuJy: jyUl, upperLimit: true, ...quality }, native: false, catalogue: false });
          }
        }
        if (cur.bad) {
          this.rejected++;
          return;
        }
        applySurveyRules(star, candidates, leftOut);
        store.addStar(star);
      };
      this.finishFn = () => {
        for (const p of summary.lines()) sink.add(p);
      };
      return;
    }

    // Long format: one row per star and band.
    const c = {
      band: roleCol('band')!,
      mag: roleCol('mag'),
      mag_err: roleCol('mag_err'),
      jy: roleCol('jy'),
      jy_err: roleCol('jy_err'),
      ul: roleCol('ul'),
    };
    const noError = new MissingErrors(file, columns, c);
    this.rowFn = (cells, line) => {
      const id = beginRow(cells, line);
      if (id === null) {
        this.rejected++;
        return;
      }
      let s = store.getLong(id);
      if (!s) s = { id, measurements: [], row: cur.row, bad: false, rows: 0, bandRow: {}, ...(cur.line !== undefined ? { line: cur.line } : {}) };
      s.rows++;
      readStarValues(s, true);
      checkDistance(s);
      const key = textOf(cells[c.band]);
      if (!bandKeys.includes(key)) {
        const guess = key === '' ? undefined : closestBandKey(key, bandKeys);
        problem(c.band, key === '' ? 'missing band' : `unknown band "${shownText(key)}" (band keys are case-sensitive${guess ? `; did you mean '${guess}'?` : `; known bands: ${bandKeys.join(' ')}`})`);
      } else {
        const prior = Object.prototype.hasOwnProperty.call(s.bandRow, key) ? s.bandRow[key] : undefined;
        if (prior !== undefined) problem(c.band, `duplicate: star "${id}" already has band ${key} in row ${prior}`);
        else s.bandRow[key] = cur.row;
      }
      const mag = magnitude(c.mag, num(c.mag, 'magnitude'), 'magnitude');
      const magErr = num(c.mag_err, 'magnitude error');
      const jy = num(c.jy, 'flux');
      const jyErr = num(c.jy_err, 'flux error');
      nonNegative(c.mag_err, magErr, 'error');
      nonNegative(c.jy_err, jyErr, 'error');
      const flagText = c.ul === undefined ? '' : textOf(cells[c.ul]).toLowerCase();
      if (!TRUE_FLAGS.has(flagText) && !FALSE_FLAGS.has(flagText)) problem(c.ul, `upper-limit flag must be 1 or 0/empty, found "${shownText(flagText)}"`);
      const ul = TRUE_FLAGS.has(flagText);
      if (mag !== undefined && jy !== undefined) problem(c.mag, 'both a magnitude and a flux are given; one row holds one of them');
      else if (mag === undefined && jy === undefined) problem(c.mag ?? c.jy, 'neither a magnitude nor a flux is given');
      if (!cur.bad) {
        if (mag !== undefined) {
          if (ul) s.measurements.push({ bandKey: key, mag, upperLimit: true });
          else if (magErr === undefined) noError.note(key, 'mag', cur.row, cur.line);
          else {
            noError.note(key, 'mag', cur.row, cur.line, true);
            s.measurements.push({ bandKey: key, mag, magErr });
          }
        } else if (jy !== undefined) {
          if (jy <= 0) problem(c.jy, `flux ${jy} Jy must be positive`);
          else if (ul) s.measurements.push({ bandKey: key, fnuJy: jy, upperLimit: true });
          else if (jyErr === undefined) noError.note(key, 'jy', cur.row, cur.line);
          else {
            noError.note(key, 'jy', cur.row, cur.line, true);
            s.measurements.push({ bandKey: key, fnuJy: jy, fnuErrJy: jyErr });
          }
        }
      }
      if (cur.bad) s.bad = true;
      store.putLong(s);
    };
    this.finishFn = () => {
      for (const p of noError.summary()) sink.add(p);
      store.eachLong((s) => {
        if (s.bad) {
          this.rejected += s.rows;
          sink.add({ file, row: s.row, line: s.line, severity: 'error', message: `star "${s.id}" was left out because of the errors in its rows` });
          return;
        }
        store.addStar({
          id: s.id,
          raDeg: s.raDeg,
          decDeg: s.decDeg,
          parallaxMas: s.parallaxMas,
          parallaxErrMas: s.parallaxErrMas,
          ...(s.parallaxMas !== undefined ? { parallaxOrigin } : {}),
          ...(s.distancePc !== undefined ? { distancePc: s.distancePc, distanceLoPc: s.distanceLoPc, distanceHiPc: s.distanceHiPc } : {}),
          avMag: s.avMag,
          ...(s.lumClass !== undefined ? { lumClass: s.lumClass } : {}),
          ...(s.fehDex !== undefined ? { fehDex: s.fehDex } : {}),
          measurements: s.measurements,
          row: s.row,
        });
      });
    };
  }

  /** The next data row (row numbers count from 1 in call order); `line` is its file line when the format has lines. */
  row(cells: TableCell[], line?: number): void {
    this.rowCount++;
    this.rowFn(cells, line);
  }

  finish(): RowCounts {
    this.finishFn();
    return {
      rowCount: this.rowCount,
      rejectedRows: this.rejected,
      excludedByQuality: this.excluded,
      leftOutBySurveyRules: this.bySurvey,
      nativeUpperLimits: this.nativeLimits,
      possibleCompanions: this.companions,
    };
  }
}

/** Shown row numbers of the rows a summary names; the rest are counted. */
const NAMED_ROWS = 5;

/** A value read from a row, before the survey rules decide on it. */
interface Candidate {
  key: string;
  m: Measurement & { quality?: string };
  /** An upper limit by the catalogue's own convention (2MASS U, AllWISE null error). */
  native: boolean;
  /** From a column named as a survey names it. */
  catalogue: boolean;
}

const REASON_WORDS: Record<LeftOutReason, string> = {
  quality_letter: 'left out by their quality letter',
  saturated: 'left out as saturated (brighter than the survey\'s bright limit)',
  catalogue_flag: 'left out by the catalogue\'s contamination or extended-source flag',
  bp_rp_excess: 'left out for a large corrected BP/RP flux excess',
};

/**
 * The survey rules' decisions gathered by band and reason, reported once per band at the end
 * (file-wide lines at the top of the report) instead of once per row. Each line names the first
 * rows, the first value's reason in full and its source.
 */
class LeftOutSummary {
  private readonly groups = new Map<string, { key: string; reason: LeftOutReason | 'native' | 'corrected'; count: number; rows: string[]; detail: string }>();
  private companions = { count: 0, rows: [] as string[] };
  private bright = { count: 0, rows: [] as string[] };
  private brightExcess = { count: 0, rows: [] as string[] };

  constructor(private readonly file: string) {}

  private static where(row: number, line: number | undefined): string {
    return line === undefined ? `row ${row}` : `row ${row} (file line ${line})`;
  }

  private add(key: string, reason: LeftOutReason | 'native' | 'corrected', detail: string, row: number, line: number | undefined): void {
    const k = `${reason}\u0000${key}`;
    let g = this.groups.get(k);
    if (!g) this.groups.set(k, (g = { key, reason, count: 0, rows: [], detail }));
    g.count++;
    if (g.rows.length < NAMED_ROWS) g.rows.push(LeftOutSummary.where(row, line));
  }

  note(key: string, reason: LeftOutReason, detail: string, row: number, line: number | undefined): void {
    this.add(key, reason, detail, row, line);
  }

  nativeLimit(key: string, row: number, line: number | undefined): void {
    this.add(key, 'native', '', row, line);
  }

  companion(row: number, line: number | undefined): void {
    this.companions.count++;
    if (this.companions.rows.length < NAMED_ROWS) this.companions.rows.push(LeftOutSummary.where(row, line));
  }

  /** A Gaia value moved by Gaia's bright-star correction (`change`: "BP 3.81 → 3.62"). */
  corrected(key: string, change: string, row: number, line: number | undefined): void {
    this.add(key, 'corrected', change, row, line);
  }

  excessTooBright(row: number, line: number | undefined): void {
    this.brightExcess.count++;
    if (this.brightExcess.rows.length < NAMED_ROWS) this.brightExcess.rows.push(LeftOutSummary.where(row, line));
  }

  ruweTooBright(row: number, line: number | undefined): void {
    this.bright.count++;
    if (this.bright.rows.length < NAMED_ROWS) this.bright.rows.push(LeftOutSummary.where(row, line));
  }

  lines(): MappingProblem[] {
    const out: MappingProblem[] = [];
    const more = (count: number, rows: string[]) => `${rows.join(', ')}${count > rows.length ? ` and ${count - rows.length} more` : ''}`;
    for (const g of this.groups.values()) {
      const n = `${g.count} ${g.key} value${g.count === 1 ? '' : 's'}`;
      const message =
        g.reason === 'native'
          ? `${n} read as upper limits by the catalogue's own convention (2MASS quality letter U, or AllWISE magnitude without an error: a 95 % upper limit) (${more(g.count, g.rows)})`
          : g.reason === 'corrected'
            ? `${n} corrected for saturation by Gaia's bright-star relation (Gaia EDR3 documentation §5.5.2, eq. ${GAIA_BRIGHT_CORRECTION_RANGE[g.key as 'G' | 'BP' | 'RP'].equation}) (${more(g.count, g.rows)}); the first: ${g.detail}`
            : `${n} ${REASON_WORDS[g.reason]} (${more(g.count, g.rows)}); the first: ${g.detail}`;
      out.push({ file: this.file, row: 0, severity: 'warning', message });
    }
    if (this.companions.count > 0) {
      out.push({ file: this.file, row: 0, severity: 'warning', message: `${this.companions.count} star${this.companions.count === 1 ? '' : 's'} with Gaia RUWE above ${RUWE_MAX} (possibly a binary, photometry may be blended) flagged possible_companion (${more(this.companions.count, this.companions.rows)})` });
    }
    if (this.brightExcess.count > 0) {
      const n = this.brightExcess.count;
      out.push({ file: this.file, row: 0, severity: 'warning', message: `${n} star${n === 1 ? '' : 's'} brighter than G ${GAIA_BRIGHT_CORRECTION_RANGE.BP.to}: the BP/RP flux excess was not tested, as it comes from saturated BP and RP fluxes there (Gaia EDR3 documentation §5.5.2) (${more(n, this.brightExcess.rows)})` });
    }
    if (this.bright.count > 0) {
      out.push({ file: this.file, row: 0, severity: 'warning', message: `${this.bright.count} star${this.bright.count === 1 ? '' : 's'} brighter than G ${RUWE_BRIGHT_G} with RUWE above ${RUWE_MAX} not flagged: RUWE is not reliable for such bright stars (${more(this.bright.count, this.bright.rows)})` });
    }
    return out;
  }
}

/**
 * Long format: values without an error, gathered by band and kind (magnitude, flux) and reported
 * once per band at the end instead of once per row. A band none of whose values has an error is
 * named with the others like it in one line ("G, BP, RP: …"); a band where only some rows lack
 * one says how many and which. The sink's reader puts these file-wide (row 0) lines at the top.
 */
class MissingErrors {
  private readonly bands = new Map<string, { kind: 'mag' | 'jy'; values: number; missing: number; rows: string[] }>();

  constructor(
    private readonly file: string,
    private readonly columns: readonly string[],
    private readonly c: { mag?: number; mag_err?: number; jy?: number; jy_err?: number },
  ) {}

  /** A value row of `band`; `withError` when it had an error. */
  note(band: string, kind: 'mag' | 'jy', row: number, line: number | undefined, withError = false): void {
    let b = this.bands.get(`${kind}\u0000${band}`);
    if (!b) this.bands.set(`${kind}\u0000${band}`, (b = { kind, values: 0, missing: 0, rows: [] }));
    b.values++;
    if (withError) return;
    b.missing++;
    if (b.rows.length < NAMED_ROWS) b.rows.push(line === undefined ? `row ${row}` : `row ${row} (file line ${line})`);
  }

  summary(): MappingProblem[] {
    const out: MappingProblem[] = [];
    for (const kind of ['mag', 'jy'] as const) {
      const errCol = kind === 'mag' ? this.c.mag_err : this.c.jy_err;
      const valueCol = kind === 'mag' ? this.c.mag : this.c.jy;
      const what = kind === 'mag' ? 'magnitude' : 'flux';
      const list = [...this.bands].filter(([, b]) => b.kind === kind && b.missing > 0).map(([k, b]) => ({ key: k.split('\u0000')[1], ...b }));
      const whole = list.filter((b) => b.missing === b.values);
      const col = errCol ?? valueCol;
      const column = col === undefined ? undefined : { name: this.columns[col], number: col + 1 };
      if (whole.length > 0) {
        const keys = whole.map((b) => b.key).join(', ');
        const one = whole.length === 1;
        const why = errCol === undefined ? `no ${what} error column is mapped` : `no row gives a ${what} error`;
        const fix = errCol === undefined ? `map the file's ${what} error column (such as ${kind === 'mag' ? 'mag_err or e_mag' : 'jy_err or e_jy'})` : `fill in the ${what} errors in column ${this.columns[errCol]}`;
        out.push({ file: this.file, row: 0, column, severity: 'warning', message: `${keys}: ${why}, so ${one ? 'this band is' : 'these bands are'} not used in any row (upper limits are kept); ${fix}` });
      }
      for (const b of list) {
        if (b.missing === b.values) continue;
        const more = b.missing > b.rows.length ? ` and ${b.missing - b.rows.length} more` : '';
        out.push({
          file: this.file,
          row: 0,
          column,
          severity: 'warning',
          message: `${b.key}: ${b.missing} of ${b.values} ${what} rows have no error (${b.rows.join(', ')}${more}), so those values were not used`,
        });
      }
    }
    return out;
  }
}

/** File-wide problems (row 0: the mapping, summaries by band) first, then the rows in order. */
export function fileWideFirst<P extends { row: number }>(problems: P[]): P[] {
  return [...problems.filter((p) => p.row === 0), ...problems.filter((p) => p.row !== 0)];
}

/**
 * Every row of a table through the mapping → stars with measurements, and every problem with file,
 * row and column (RowMapper with everything kept in memory).
 */
export function applyMapping(table: ColumnTable, mapping: Mapping, rules: MappingRules, options: ApplyOptions): MappingResult {
  const problems: MappingProblem[] = [];
  const store = new MemoryStore();
  const mapper = new RowMapper(table.columns, table.file, mapping, rules, options, store, { add: (p) => problems.push(p) });
  for (let r = 0; r < table.rows.length; r++) mapper.row(table.rows[r], table.lines?.[r]);
  const counts = mapper.finish();
  return {
    stars: store.stars,
    problems: fileWideFirst(problems),
    ...counts,
    errorCount: problems.filter((p) => p.severity === 'error').length,
    warningCount: problems.filter((p) => p.severity === 'warning').length,
  };
}
