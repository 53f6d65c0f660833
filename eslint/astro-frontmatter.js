// A minimal ESLint parser for .astro files: the frontmatter (between the leading `---` fences) and
// the bodies of <script> tags are parsed as TypeScript; everything else is blanked to spaces (line
// breaks kept), so reported lines and columns are the file's own. Enough for import rules; the
// template itself is checked by `astro check`.
import tseslint from 'typescript-eslint';

export function astroToScript(text) {
  const keep = new Uint8Array(text.length);
  const fm = /^\s*---\r?\n([\s\S]*?)\r?\n---/.exec(text);
  if (fm) keep.fill(1, fm.index + fm[0].indexOf(fm[1]), fm.index + fm[0].indexOf(fm[1]) + fm[1].length);
  for (const m of text.matchAll(/<script\b[^>]*>([\s\S]*?)<\/script>/g)) {
    const start = m.index + m[0].indexOf('>') + 1;
    keep.fill(1, start, start + m[1].length);
  }
  let out = '';
  for (let i = 0; i < text.length; i++) out += keep[i] || text[i] === '\n' || text[i] === '\r' ? text[i] : ' ';
  return out;
}

export function parseForESLint(text, options) {
  return tseslint.parser.parseForESLint(astroToScript(text), { ...options, filePath: undefined });
}

export default { parseForESLint, meta: { name: 'starkiln-astro-frontmatter' } };
