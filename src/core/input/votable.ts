// IVOA VOTable (version 1.1–1.4) with TABLEDATA serialisation → columns, units, UCDs and rows of
// text cells. Reference: IVOA VOTable Format Definition 1.4 (2019), sections 4 (FIELD), 5 (DATA).
// BINARY, BINARY2 and FITS serialisations are refused with a message saying how to re-save.
import { XMLParser, XMLValidator } from 'fast-xml-parser';

export class VoTableError extends Error {
  readonly line?: number;
  constructor(message: string, line?: number) {
    super(message);
    this.name = 'VoTableError';
    this.line = line;
  }
}

export interface VoTableField {
  name: string;
  /** ID attribute when present (FIELDref and some writers use it). */
  id?: string;
  datatype?: string;
  arraysize?: string;
  unit?: string;
  ucd?: string;
  /** VALUES null="…": the cell text that means "no value". */
  nullText?: string;
}

export interface VoTable {
  fields: VoTableField[];
  /** Text of each cell, null where the cell is the field's null value. */
  rows: (string | null)[][];
  /** TABLE name attribute. */
  name?: string;
}

declare const TextDecoder: new (label?: string, options?: { fatal?: boolean }) => { decode(bytes: Uint8Array): string };

type Node = Record<string, unknown>;

const asArray = (v: unknown): unknown[] => (v === undefined ? [] : Array.isArray(v) ? v : [v]);

function textOf(td: unknown): string {
  if (td === undefined || td === null) return '';
  if (typeof td === 'string') return td;
  if (typeof td === 'number' || typeof td === 'boolean') return String(td);
  const t = (td as Node)['#text'];
  return t === undefined ? '' : String(t);
}

function findTables(resource: Node, out: Node[]): void {
  for (const t of asArray(resource.TABLE)) out.push(t as Node);
  for (const r of asArray(resource.RESOURCE)) findTables(r as Node, out);
}

/** The first TABLE of a VOTable document (or the `index`-th). */
export function readVoTable(input: Uint8Array | string, options: { source?: string; index?: number } = {}): VoTable {
  const source = options.source ?? 'VOTable';
  const text = typeof input === 'string' ? input : new TextDecoder('utf-8').decode(input);
  const valid = XMLValidator.validate(text);
  if (valid !== true) {
    throw new VoTableError(`${source}: not well-formed XML at line ${valid.err.line}, column ${valid.err.col}: ${valid.err.msg}`, valid.err.line);
  }
  const parser = new XMLParser({
    ignoreAttributes: false,
    attributeNamePrefix: '@',
    removeNSPrefix: true,
    parseTagValue: false,
    parseAttributeValue: false,
    trimValues: true,
    isArray: (name) => ['RESOURCE', 'TABLE', 'FIELD', 'TR', 'TD', 'INFO', 'PARAM'].includes(name),
  });
  const doc = parser.parse(text) as Node;
  const root = doc.VOTABLE as Node | undefined;
  if (!root) {
    const rootName = Object.keys(doc).find((k) => !k.startsWith('?') && !k.startsWith('#')) ?? 'none';
    throw new VoTableError(`${source}: this XML is not a VOTable (its root element is <${rootName}>, a VOTable's is <VOTABLE>)`);
  }
  const tables: Node[] = [];
  findTables(root, tables);
  const index = options.index ?? 0;
  const table = tables[index];
  if (!table) throw new VoTableError(`${source}: the VOTable holds ${tables.length === 0 ? 'no TABLE' : `only ${tables.length} TABLE elements`}`);
  const fields: VoTableField[] = asArray(table.FIELD).map((f, i) => {
    const n = f as Node;
    const values = n.VALUES as Node | undefined;
    const name = String(n['@name'] ?? n['@ID'] ?? `col${i + 1}`);
    const field: VoTableField = { name };
    if (n['@ID'] !== undefined) field.id = String(n['@ID']);
    if (n['@datatype'] !== undefined) field.datatype = String(n['@datatype']);
    if (n['@arraysize'] !== undefined) field.arraysize = String(n['@arraysize']);
    if (n['@unit'] !== undefined) field.unit = String(n['@unit']);
    if (n['@ucd'] !== undefined) field.ucd = String(n['@ucd']);
    if (values && values['@null'] !== undefined) field.nullText = String(values['@null']);
    return field;
  });
  if (fields.length === 0) throw new VoTableError(`${source}: the TABLE has no FIELD elements (no columns)`);
  const data = table.DATA as Node | undefined;
  if (!data) return { fields, rows: [], name: table['@name'] as string | undefined };
  for (const other of ['BINARY', 'BINARY2', 'FITS']) {
    if (data[other] !== undefined) {
      throw new VoTableError(`${source}: the table data are in the ${other} serialisation; Starkiln reads TABLEDATA (in astropy: votable.writeto(..., tabledata_format='tabledata') or Table.write(..., format='votable'))`);
    }
  }
  const tabledata = data.TABLEDATA as Node | string | undefined;
  const trs = tabledata && typeof tabledata === 'object' ? asArray(tabledata.TR) : [];
  const rows = trs.map((tr) => {
    const tds = asArray((tr as Node)?.TD);
    return tds.map((td, c) => {
      const t = textOf(td);
      const nullText = fields[c]?.nullText;
      return t === '' || (nullText !== undefined && t === nullText) ? null : t;
    });
  });
  return { fields, rows, name: table['@name'] as string | undefined };
}
