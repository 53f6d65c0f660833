// VOTable 1.4 download (IVOA Recommendation 2019-10-21), TABLEDATA serialisation: one FIELD per
// catalogue column with its unit (VOUnit) and UCD, the provenance as INFO elements on the resource
// and PARAMs on the table. Missing values are empty cells (allowed for floating-point fields).
import { Chunker, columnMeta } from './columns';
import type { ExportSource } from './source';

const XML_ESCAPES: Record<string, string> = { '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&apos;' };

/** Escapes text for XML and drops characters XML 1.0 cannot carry at all. */
export function xmlText(s: string): string {
  return s.replace(/[\u0000-\u0008\u000B\u000C\u000E-\u001F\uFFFE\uFFFF]/g, '').replace(/[&<>"']/g, (c) => XML_ESCAPES[c]);
}

export async function* votableExport(src: ExportSource): AsyncGenerator<Uint8Array> {
  try {
    const out = new Chunker();
    const p = src.provenance;
    const main = p.batches[0];
    const info = (name: string, value: string) => `  <INFO name="${xmlText(name)}" value="${xmlText(value)}"/>\n`;
    out.push('<?xml version="1.0" encoding="UTF-8"?>\n');
    out.push('<VOTABLE version="1.4" xmlns="http://www.ivoa.net/xml/VOTable/v1.3" xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance">\n');
    out.push(`<RESOURCE name="starkiln_catalogue" type="results">\n`);
    out.push(`  <DESCRIPTION>${xmlText(`Starkiln catalogue of the campaign ${p.campaign.name}: ${p.selection}.`)}</DESCRIPTION>\n`);
    out.push(info('software', `${p.software.name} ${p.software.version}`));
    out.push(info('created', p.createdAt));
    out.push(info('campaign', `${p.campaign.name} (${p.campaign.id})`));
    out.push(info('selection', p.selection));
    for (const l of src.lines) out.push(info('provenance', l));
    out.push(`  <TABLE name="catalogue" nrows="${src.count}">\n`);
    out.push(`    <DESCRIPTION>One row per star: its current fit of a blackbody through the real passbands, with derived values and review status.</DESCRIPTION>\n`);
    const param = (name: string, datatype: 'char' | 'double', value: string | number, ucd: string, description: string) =>
      `    <PARAM name="${name}" datatype="${datatype}"${datatype === 'char' ? ' arraysize="*"' : ''} ucd="${ucd}" value="${xmlText(String(value))}"><DESCRIPTION>${xmlText(description)}</DESCRIPTION></PARAM>\n`;
    out.push(param('software_version', 'char', p.software.version, 'meta.version', 'Starkiln version that wrote this file'));
    out.push(param('band_library_version', 'char', p.bandLibraryVersions.join(' ') || 'none', 'meta.version', 'band library version(s) of the fits'));
    if (main) {
      out.push(param('extinction_law', 'char', main.law, 'meta.code', 'extinction law of the batch with most rows (f99, ccm89 or od94)'));
      out.push(param('R_V', 'double', main.rv, 'phys.absorption.coeff', 'R_V of that batch'));
    }
    for (const c of src.columns) {
      const m = columnMeta(c);
      const type = m.kind === 'text' ? 'datatype="char" arraysize="*"' : m.kind === 'int' ? 'datatype="int"' : 'datatype="double"';
      out.push(`    <FIELD name="${c.name}" ID="${c.name}" ${type}${m.voUnit ? ` unit="${m.voUnit}"` : ''} ucd="${m.ucd}"><DESCRIPTION>${xmlText(c.description)}</DESCRIPTION></FIELD>\n`);
    }
    out.push('    <DATA><TABLEDATA>\n');
    const names = src.columns.map((c) => c.name);
    for (const row of src.rows()) {
      let tr = '<TR>';
      for (const name of names) {
        const v = row[name];
        if (v === null || v === undefined || (typeof v === 'number' && !Number.isFinite(v))) tr += '<TD></TD>';
        else tr += `<TD>${typeof v === 'number' ? String(v) : xmlText(v)}</TD>`;
      }
      out.push(`${tr}</TR>\n`);
      if (out.full) yield out.take();
    }
    out.push('    </TABLEDATA></DATA>\n  </TABLE>\n</RESOURCE>\n</VOTABLE>\n');
    yield out.take();
  } finally {
    src.close();
  }
}
