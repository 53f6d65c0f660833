// IVOA VOTable (version 1.1–1.4) with TABLEDATA serialisation → columns, units, UCDs and rows of
// text cells. Reference: IVOA VOTable Format Definition 1.4 (2019), sections 4 (FIELD), 5 (DATA).
// BINARY, BINARY2 and FITS serialisations are refused with a message saying how to re-save.
import { XMLParser, XMLValidator } from 'fast-xml-parser';
import { firstInvalidUtf8, invalidUtf8Message, lineOfByte } from './delimited';
import { ReadBudget } from './limits';
import { guardXml } from './xml-guard';

export class VoTableError extends Error {
  readonly line?: number;
  /** Refused for safety (a DTD, entities, nesting or attribute sizes), not merely malformed. */
  readonly unsafe: boolean;
  constructor(message: string, line?: number, unsafe = false) {
    super(message);
    this.name = 'VoTableError';
    this.line = line;
    this.unsafe = unsafe;
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

/** Encodings a VOTable may declare that we read; anything else is refused by name. */
const ENCODINGS: Record<string, string> = { 'utf-8': 'utf-8', utf8: 'utf-8', 'us-ascii': 'utf-8', ascii: 'utf-8', 'iso-8859-1': 'iso-8859-1', latin1: 'iso-8859-1', 'windows-1252': 'windows-1252' };

/**
 * Bytes → text in the encoding the XML declaration names (UTF-8 when it names none, as XML 1.0
 * section 4.3.3 says); invalid UTF-8 is refused with its byte offset and line.
 */
function decodeXml(bytes: Uint8Array, source: string): string {
  const decl = /^(?:\xef\xbb\xbf)?\s*<\?xml[^>]*?encoding\s*=\s*["']([A-Za-z0-9._-]+)["']/.exec(String.fromCharCode(...bytes.subarray(0, 200)));
  const declared = decl?.[1].toLowerCase();
  const encoding = declared === undefined ? 'utf-8' : ENCODINGS[declared];
  if (!encoding) throw new VoTableError(`${source}: the XML declares encoding "${decl![1]}"; Starkiln reads VOTables in UTF-8 (or ISO-8859-1): save it as UTF-8`, 1);
  if (encoding !== 'utf-8') return new TextDecoder(encoding).decode(bytes);
  try {
    return new TextDecoder('utf-8', { fatal: true }).decode(bytes);
  } catch {
    const at = Math.max(0, firstInvalidUtf8(bytes));
    throw new VoTableError(`${source}: ${invalidUtf8Message(bytes, at)}; a VOTable without an encoding declaration must be UTF-8: save it as UTF-8`, lineOfByte(bytes, at));
  }
}

export interface ReadVoTableOptions {
  source?: string;
  index?: number;
  /** Rows, columns, cells and time the file may take (limits.ts); default limits when absent. */
  budget?: ReadBudget;
}

/** The first TABLE of a VOTable document (or the `index`-th). */
export function readVoTable(input: Uint8Array | string, options: ReadVoTableOptions = {}): VoTable {
  const source = options.source ?? 'VOTable';
  const budget = options.budget ?? new ReadBudget(source);
  const text = typeof input === 'string' ? input : decodeXml(input, source);
  guardXml(text, budget, (p) => {
    throw new VoTableError(`${source}: line ${p.line}, column ${p.column}: ${p.message}`, p.line, true);
  });
  budget.checkTime(() => 'after the first pass');
  let valid: ReturnType<typeof XMLValidator.validate>;
  let doc: Node;
  try {
    valid = XMLValidator.validate(text);
    if (valid !== true) {
      throw new VoTableError(`${source}: not well-formed XML at line ${valid.err.line}, column ${valid.err.col}: ${valid.err.msg}`, valid.err.line);
    }
    budget.checkTime(() => 'after checking the XML');
    doc = parser().parse(text) as Node;
  } catch (err) {
    if (err instanceof VoTableError) throw err;
    // The parser's own refusals (its entity and nesting limits) are input errors too, never a crash.
    throw new VoTableError(`${source}: the XML cannot be read: ${(err as Error).message}`, undefined, true);
  }
  budget.checkTime(() => 'after parsing the XML');
  return tableOf(doc, source, options.index ?? 0, budget);
}

function parser(): XMLParser {
  return new XMLParser({
    ignoreAttributes: false,
    attributeNamePrefix: '@',
    removeNSPrefix: true,
    parseTagValue: false,
    parseAttributeValue: false,
    trimValues: true,
    // No DTD gets here (guardXml refuses them); entities stay the five of XML and character references.
    processEntities: true,
    isArray: (name) => ['RESOURCE', 'TABLE', 'FIELD', 'TR', 'TD', 'INFO', 'PARAM'].includes(name),
  });
}

function tableOf(doc: Node, source: string, index: number, budget: ReadBudget): VoTable {
  const root = doc.VOTABLE as Node | undefined;
  if (!root) {
    const rootName = Object.keys(doc).find((k) => !k.startsWith('?') && !k.startsWith('#')) ?? 'none';
    throw new VoTableError(`${source}: this XML is not a VOTable (its root element is <${rootName}>, a VOTable's is <VOTABLE>)`);
  }
  const tables: Node[] = [];
  findTables(root, tables);
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
  const rows = trs.map((tr, r) => {
    budget.tick(() => `row ${r + 1}`);
    const tds = asArray((tr as Node)?.TD);
    return tds.map((td, c) => {
      const t = textOf(td);
      const nullText = fields[c]?.nullText;
      return t === '' || (nullText !== undefined && t === nullText) ? null : t;
    });
  });
  return { fields, rows, name: table['@name'] as string | undefined };
}
