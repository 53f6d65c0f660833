// Checking a mapping against the table's columns, before any row is read.
import { BAND_ROLES, ROLE_LABELS, type ColumnRole, type Mapping, type MappingProblem } from './column-table';
import { closestBandKey, mistypedBandColumn } from './column-names';
import { GAIA_VEGA_ZERO_POINT_MAG } from './gaia-zero-points';

/** Mistakes in the mapping itself (not in the data): missing id, a band role without a band … */
export function checkMapping(mapping: Mapping, columns: readonly string[], bandKeys: readonly string[], file = 'table'): MappingProblem[] {
  const problems: MappingProblem[] = [];
  const header = (message: string, name?: string) =>
    problems.push({ file, row: 0, column: name === undefined ? undefined : { name, number: columns.indexOf(name) + 1 }, severity: 'error', message });
  const used = Object.entries(mapping.columns).filter(([, a]) => a.role !== 'ignore');
  for (const [name] of used) if (!columns.includes(name)) header(`the mapping names column "${name}", which the file does not have`);
  const single = (role: ColumnRole) => {
    const cols = used.filter(([, a]) => a.role === role).map(([n]) => n);
    if (cols.length > 1) header(`only one column can be ${ROLE_LABELS[role]}; ${cols.join(', ')} all are`, cols[1]);
  };
  if (!used.some(([, a]) => a.role === 'id')) header('no column is mapped to the star id');
  for (const r of ['id', 'ra', 'dec', 'parallax', 'parallax_err', 'av', 'lum_class', 'feh'] as ColumnRole[]) single(r);
  if (mapping.layout === 'long') {
    for (const r of ['band', 'mag', 'mag_err', 'jy', 'jy_err', 'ul'] as ColumnRole[]) single(r);
    if (!used.some(([, a]) => a.role === 'band')) header('the long format needs a column with the band of each row');
    if (!used.some(([, a]) => a.role === 'mag' || a.role === 'jy')) header('the long format needs a magnitude or a flux (Jy) column');
    for (const [name, a] of used) {
      if (['mag_ul', 'jy_ul', 'gaia_flux', 'gaia_flux_err', 'quality'].includes(a.role)) header(`column ${name}: ${ROLE_LABELS[a.role]} is for the wide format (one row per star)`, name);
    }
  } else {
    const seen = new Map<string, string>();
    for (const [name, a] of used) {
      if (a.role === 'band' || a.role === 'ul') {
        header(`column ${name}: ${ROLE_LABELS[a.role]} only applies to the long format (one row per star and band)`, name);
        continue;
      }
      if (!BAND_ROLES.includes(a.role)) continue;
      if (!a.band) header(`column ${name} is mapped to ${ROLE_LABELS[a.role]} but no band is chosen`, name);
      else if (!bandKeys.includes(a.band)) {
        const guess = closestBandKey(a.band, bandKeys);
        header(`column ${name}: unknown band "${a.band}" (band keys are case-sensitive; ${guess ? `did you mean '${guess}'?` : `known bands: ${bandKeys.join(' ')}`})`, name);
      }
      else if ((a.role === 'gaia_flux' || a.role === 'gaia_flux_err') && !(a.band in GAIA_VEGA_ZERO_POINT_MAG)) {
        header(`column ${name}: Gaia fluxes in e⁻/s only convert for G, BP and RP, not ${a.band}`, name);
      } else {
        const k = `${a.band}/${a.role}`;
        if (seen.has(k)) header(`columns ${seen.get(k)} and ${name} are both ${a.band} ${ROLE_LABELS[a.role]}`, name);
        else seen.set(k, name);
      }
    }
    const bandsWith = (roles: ColumnRole[]) => new Map(used.filter(([, a]) => a.band && roles.includes(a.role)).map(([n, a]) => [a.band!, n]));
    const values = bandsWith(['mag', 'jy', 'gaia_flux', 'mag_ul', 'jy_ul']);
    for (const [name, a] of used) {
      if ((a.role === 'mag_err' || a.role === 'jy_err' || a.role === 'gaia_flux_err') && a.band && !values.has(a.band)) {
        header(`column ${name} is the ${a.band} error, but no column holds a ${a.band} value`, name);
      }
    }
    const kinds = new Map<string, Set<string>>();
    for (const [, a] of used) {
      if (!a.band || !['mag', 'jy', 'gaia_flux'].includes(a.role)) continue;
      if (!kinds.has(a.band)) kinds.set(a.band, new Set());
      kinds.get(a.band)!.add(a.role);
    }
    for (const [band, set] of kinds) {
      if (set.size > 1) header(`band ${band} has more than one value column (${[...set].map((r) => ROLE_LABELS[r as ColumnRole]).join(', ')}); keep one per file, or import them as separate sources`);
    }
    // A band column with its key mistyped would lose its data without a word: say so, and what it
    // most likely meant. A warning, not an error: the analyst may leave the column out on purpose.
    columns.forEach((name, i) => {
      if ((mapping.columns[name]?.role ?? 'ignore') !== 'ignore') return;
      const meant = mistypedBandColumn(name, bandKeys);
      if (meant) {
        problems.push({ file, row: 0, column: { name, number: i + 1 }, severity: 'warning', message: `unknown band column "${name}" (band keys are case-sensitive); did you mean '${meant}'? The column was not read` });
      }
    });
  }
  for (const [name, a] of used) {
    if (a.role !== 'quality') continue;
    if (!a.bands || a.bands.length === 0) header(`column ${name}: say which band each quality letter belongs to`, name);
    else for (const b of a.bands) if (b !== '-' && !bandKeys.includes(b)) header(`column ${name}: unknown band "${b}" for a quality letter`, name);
  }
  return problems;
}
