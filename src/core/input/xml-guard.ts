// What an XML file must not hold before any XML parser sees it (OWASP XML External Entity
// Prevention and XML Security cheat sheets: refuse document type definitions; bound nesting,
// attribute sizes and element counts). A VOTable needs no DTD (IVOA VOTable 1.4 is defined by an
// XML Schema), so any <!DOCTYPE or <!ENTITY is refused outright: that stops entity expansion
// ("billion laughs") and external entities alike. One pass over the text, no parser, so the
// refusal costs a scan and no memory.
import { ReadBudget } from './limits';

/** Deepest element nesting read (a VOTable with nested RESOURCEs and GROUPs stays far below). */
export const XML_MAX_DEPTH = 64;
/**
 * What one VOTable cell costs against the cell budget: its XML tree takes about five times the
 * memory of a CSV cell while read (1 000 000 TDs need 350–500 MB of heap, the same cells as CSV
 * under 100 MB; measured with node --max-old-space-size, see docs/decisions/0018-input-limits.md).
 */
export const XML_CELL_WEIGHT = 5;
/** Longest attribute value or element name read, in characters. */
export const XML_MAX_ATTRIBUTE_CHARS = 65_536;

export interface XmlProblem {
  message: string;
  /** 1-based line and column of the place. */
  line: number;
  column: number;
}

export interface XmlCounts {
  /** FIELD elements (columns) and TD elements (cells) seen, and TR elements (rows). */
  fields: number;
  rows: number;
  cells: number;
}

function lineColumn(text: string, at: number): { line: number; column: number } {
  let line = 1;
  let lineStart = 0;
  for (let i = text.indexOf('\n'); i >= 0 && i < at; i = text.indexOf('\n', i + 1)) {
    line++;
    lineStart = i + 1;
  }
  return { line, column: at - lineStart + 1 };
}

/**
 * Refuses DTDs and entity declarations, characters XML 1.0 forbids (NUL and most control
 * characters), nesting deeper than XML_MAX_DEPTH, attribute values or names longer than
 * XML_MAX_ATTRIBUTE_CHARS, and more FIELDs, TRs or TDs than the budget allows. Returns the counts;
 * a problem is thrown by `fail` (the reader's own error class). Malformed markup is left to the
 * parser's validator, which says where.
 */
export function guardXml(text: string, budget: ReadBudget, fail: (p: XmlProblem) => never): XmlCounts {
  const at = (i: number, message: string): never => fail({ message, ...lineColumn(text, i) });
  const where = (i: number) => () => {
    const p = lineColumn(text, i);
    return `line ${p.line}, column ${p.column}`;
  };
  const counts: XmlCounts = { fields: 0, rows: 0, cells: 0 };
  const n = text.length;
  // Characters XML 1.0 does not allow (section 2.2): C0 controls other than tab, LF and CR.
  const bad = text.search(NOT_XML_CHAR);
  if (bad >= 0) {
    const c = text.charCodeAt(bad);
    at(bad, `the character U+${c.toString(16).toUpperCase().padStart(4, '0')} ${c === 0 ? '(NUL) ' : ''}is not allowed in XML`);
  }
  let depth = 0;
  let i = text.indexOf('<');
  while (i >= 0 && i < n) {
    budget.tick(where(i));
    const next = text.charCodeAt(i + 1);
    if (next === 0x21 /* ! */) {
      if (text.startsWith('<!--', i)) {
        const end = text.indexOf('-->', i + 4);
        if (end < 0) return counts;
        i = text.indexOf('<', end + 3);
        continue;
      }
      if (text.startsWith('<![CDATA[', i)) {
        const end = text.indexOf(']]>', i + 9);
        if (end < 0) return counts;
        i = text.indexOf('<', end + 3);
        continue;
      }
      const word = text.slice(i + 2, i + 9).toUpperCase();
      if (word.startsWith('DOCTYPE') || word.startsWith('ENTITY')) {
        at(
          i,
          `the file declares a document type (<!${word.startsWith('DOCTYPE') ? 'DOCTYPE' : 'ENTITY'} …>); Starkiln reads no DTDs and no entities they define (entity expansion and external entities are a known attack), and a VOTable needs none: remove the declaration`,
        );
      }
      return counts;
    }
    if (next === 0x3f /* ? */) {
      const end = text.indexOf('?>', i + 2);
      if (end < 0) return counts;
      i = text.indexOf('<', end + 2);
      continue;
    }
    if (next === 0x2f /* / */) {
      depth--;
      const end = text.indexOf('>', i + 2);
      if (end < 0) return counts;
      i = text.indexOf('<', end + 1);
      continue;
    }
    // A start tag: its name, then attributes up to '>' or '/>'.
    let p = i + 1;
    while (p < n && !isSpace(text.charCodeAt(p)) && text.charCodeAt(p) !== 0x3e && text.charCodeAt(p) !== 0x2f) p++;
    if (p - i - 1 > XML_MAX_ATTRIBUTE_CHARS) at(i, `an element name of more than ${XML_MAX_ATTRIBUTE_CHARS} characters`);
    const name = localName(text.slice(i + 1, p));
    let selfClosing = false;
    for (;;) {
      while (p < n && isSpace(text.charCodeAt(p))) p++;
      if (p >= n) return counts;
      const c = text.charCodeAt(p);
      if (c === 0x3e) break;
      if (c === 0x2f && text.charCodeAt(p + 1) === 0x3e) {
        selfClosing = true;
        p++;
        break;
      }
      const eq = text.indexOf('=', p);
      if (eq < 0) return counts;
      if (eq - p > XML_MAX_ATTRIBUTE_CHARS) at(p, `an attribute name of more than ${XML_MAX_ATTRIBUTE_CHARS} characters`);
      let q = eq + 1;
      while (q < n && isSpace(text.charCodeAt(q))) q++;
      const quote = text[q];
      if (quote !== '"' && quote !== "'") return counts;
      const close = text.indexOf(quote, q + 1);
      if (close < 0) return counts;
      if (close - q - 1 > XML_MAX_ATTRIBUTE_CHARS) {
        at(q, `an attribute value of ${close - q - 1} characters (${text.slice(p, eq).trim()} of <${name}>), more than the ${XML_MAX_ATTRIBUTE_CHARS} read`);
      }
      p = close + 1;
    }
    if (name === 'FIELD') {
      counts.fields++;
      budget.columns(counts.fields, where(i));
    } else if (name === 'TR') {
      counts.rows++;
      budget.rows(counts.rows, where(i));
    } else if (name === 'TD') {
      counts.cells++;
      budget.cells(counts.cells, where(i), XML_CELL_WEIGHT);
    }
    if (!selfClosing) {
      depth++;
      if (depth > XML_MAX_DEPTH) at(i, `elements nested more than ${XML_MAX_DEPTH} deep (<${name}> here); a VOTable nests a few levels`);
    }
    i = text.indexOf('<', p + 1);
  }
  return counts;
}

const NOT_XML_CHAR = /[\u0000-\u0008\u000b\u000c\u000e-\u001f\ufffe\uffff]/;

function isSpace(c: number): boolean {
  return c === 0x20 || c === 0x09 || c === 0x0a || c === 0x0d;
}

function localName(qname: string): string {
  const colon = qname.indexOf(':');
  return colon >= 0 ? qname.slice(colon + 1) : qname;
}
