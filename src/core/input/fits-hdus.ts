// Walking a FITS file HDU by HDU (FITS Standard 4.0, sections 4.4 and 7): each header, the size of
// its data, and the binary table when there is one. Section numbers refer to the standard.
import { FitsTable } from './fits-bintable';
import { ascii, CARD, FITS_BLOCK, FitsError, FitsHeader, readHeader, type FitsFile, type FitsHdu, type HduKind, type ReadFitsOptions } from './fits-header';

// HDU layout (sections 4.4, 7)

const VALID_BITPIX = new Set([8, 16, 32, 64, -32, -64]);

function requireInt(header: FitsHeader, keyword: string, hduIndex: number, source: string, offset: number): number {
  const card = header.card(keyword);
  const v = card?.value;
  if (typeof v !== 'number' || !Number.isInteger(v)) {
    const found = card === undefined ? 'missing' : `${JSON.stringify(typeof v === 'bigint' ? v.toString() : v)}`;
    throw new FitsError(`${source}: HDU ${hduIndex} header${card ? ` card ${card.cardNumber}` : ''}: ${keyword} must be an integer, found ${found}`, {
      byteOffset: offset,
      hdu: hduIndex,
      keyword,
    });
  }
  return v;
}

interface Layout {
  kind: HduKind;
  dataBytes: number;
}

function layoutOf(header: FitsHeader, hduIndex: number, source: string, offset: number): Layout {
  const first = header.cards[0];
  let kind: HduKind;
  if (hduIndex === 0) {
    if (!first || first.keyword !== 'SIMPLE') {
      throw new FitsError(`${source}: not a FITS file: the first card must be SIMPLE = T (section 4.4.1.1), found "${first?.keyword ?? ''}"`, { byteOffset: 0, hdu: 0 });
    }
    if (first.value !== true) {
      throw new FitsError(`${source}: SIMPLE = ${String(first.value)}: the file says it does not conform to the FITS standard`, { byteOffset: 0, hdu: 0, keyword: 'SIMPLE' });
    }
    kind = 'primary';
  } else {
    if (!first || first.keyword !== 'XTENSION') {
      throw new FitsError(`${source}: HDU ${hduIndex} at byte ${offset}: an extension must start with XTENSION, found "${first?.keyword ?? ''}"`, { byteOffset: offset, hdu: hduIndex });
    }
    const x = String(first.value ?? '').trim();
    kind = x === 'BINTABLE' ? 'bintable' : x === 'IMAGE' ? 'image' : x === 'TABLE' ? 'table' : 'other';
  }
  const bitpix = requireInt(header, 'BITPIX', hduIndex, source, offset);
  if (!VALID_BITPIX.has(bitpix)) {
    throw new FitsError(`${source}: HDU ${hduIndex} header card ${header.card('BITPIX')!.cardNumber}: BITPIX = ${bitpix} is not one of 8, 16, 32, 64, -32, -64`, {
      byteOffset: offset,
      hdu: hduIndex,
      keyword: 'BITPIX',
    });
  }
  const naxis = requireInt(header, 'NAXIS', hduIndex, source, offset);
  if (naxis < 0 || naxis > 999) {
    throw new FitsError(`${source}: HDU ${hduIndex}: NAXIS = ${naxis} is outside 0..999`, { byteOffset: offset, hdu: hduIndex, keyword: 'NAXIS' });
  }
  const axes: number[] = [];
  for (let i = 1; i <= naxis; i++) {
    const n = requireInt(header, `NAXIS${i}`, hduIndex, source, offset);
    if (n < 0) throw new FitsError(`${source}: HDU ${hduIndex}: NAXIS${i} = ${n} is negative`, { byteOffset: offset, hdu: hduIndex, keyword: `NAXIS${i}` });
    axes.push(n);
  }
  const pcount = header.has('PCOUNT') ? requireInt(header, 'PCOUNT', hduIndex, source, offset) : 0;
  const gcount = header.has('GCOUNT') ? requireInt(header, 'GCOUNT', hduIndex, source, offset) : 1;
  if (pcount < 0 || gcount < 0) {
    const keyword = pcount < 0 ? 'PCOUNT' : 'GCOUNT';
    throw new FitsError(`${source}: HDU ${hduIndex}: ${keyword} = ${pcount < 0 ? pcount : gcount} is negative`, { byteOffset: offset, hdu: hduIndex, keyword });
  }
  // Random groups (section 6): NAXIS1 = 0 and GROUPS = T in the primary; NAXIS1 is not part of the size.
  const groups = kind === 'primary' && naxis > 0 && axes[0] === 0 && header.get('GROUPS') === true;
  if (groups) kind = 'random-groups';
  let product = naxis === 0 ? 0 : 1;
  for (let i = groups ? 1 : 0; i < axes.length; i++) product *= axes[i];
  const dataBytes = (Math.abs(bitpix) / 8) * gcount * (pcount + product);
  if (kind === 'bintable') {
    if (bitpix !== 8 || naxis !== 2 || gcount !== 1) {
      throw new FitsError(`${source}: HDU ${hduIndex}: a BINTABLE needs BITPIX = 8, NAXIS = 2 and GCOUNT = 1 (section 7.3.1), found ${bitpix}, ${naxis}, ${gcount}`, {
        byteOffset: offset,
        hdu: hduIndex,
      });
    }
  }
  return { kind, dataBytes };
}

/** Reads every HDU's header and decodes binary tables. Throws FitsError on malformed input. */
export function readFits(bytes: Uint8Array, options: ReadFitsOptions = {}): FitsFile {
  const source = options.source ?? 'FITS file';
  const warnings: string[] = [];
  if (bytes.length === 0) throw new FitsError(`${source}: the file is empty`, { byteOffset: 0 });
  if (bytes.length < CARD || ascii(bytes, 0, 9) !== 'SIMPLE  =') {
    throw new FitsError(`${source}: not a FITS file: it must begin with the card "SIMPLE  =" (FITS Standard 4.0, section 4.4.1.1)`, { byteOffset: 0, hdu: 0 });
  }
  const hdus: FitsHdu[] = [];
  let offset = 0;
  while (offset < bytes.length) {
    const index = hdus.length;
    if (index > 0 && bytes.length - offset >= 8 && ascii(bytes, offset, offset + 8) === 'XTENSION' && bytes.length - offset < FITS_BLOCK) {
      // An extension whose header is cut off: reading on would take the file for its primary HDU alone.
      throw new FitsError(
        `${source}: truncated file: HDU ${index} (an extension starting at byte ${offset}) is cut off inside its header, ${bytes.length - offset} of at least ${FITS_BLOCK} bytes present`,
        { byteOffset: bytes.length, hdu: index },
      );
    }
    if (index > 0 && (bytes.length - offset < FITS_BLOCK || ascii(bytes, offset, offset + 8) !== 'XTENSION')) {
      // Astropy also ignores what follows the last HDU when it is not an extension; say so.
      warnings.push(`${source}: ${bytes.length - offset} bytes after the last HDU (from byte ${offset}) are not a FITS extension and were ignored`);
      break;
    }
    options.budget?.checkTime(() => `HDU ${index} (byte ${offset})`);
    const { header, end } = readHeader(bytes, offset, index, source);
    const { kind, dataBytes } = layoutOf(header, index, source, offset);
    const dataOffset = end;
    const padded = Math.ceil(dataBytes / FITS_BLOCK) * FITS_BLOCK;
    let truncated = false;
    if (dataOffset + dataBytes > bytes.length) {
      if (!options.allowTruncatedData) {
        throw new FitsError(
          `${source}: truncated file: HDU ${index} declares ${dataBytes} bytes of data from byte ${dataOffset}, but the file ends at byte ${bytes.length} (${dataOffset + dataBytes - bytes.length} bytes missing)`,
          { byteOffset: bytes.length, hdu: index },
        );
      }
      truncated = true;
      warnings.push(`${source}: HDU ${index} data is cut short (file ends at byte ${bytes.length}); only its header was read`);
    } else if (dataOffset + padded > bytes.length) {
      warnings.push(`${source}: the file length ${bytes.length} is not a multiple of the FITS block size 2880 (HDU ${index} lacks its final padding); the data itself is complete`);
    }
    const name = index === 0 ? 'PRIMARY' : (header.getString('EXTNAME') ?? '').trim();
    const hdu: FitsHdu = { index, kind, name, header, headerOffset: offset, dataOffset, dataBytes, truncated };
    if (kind === 'bintable' && !truncated) hdu.table = new FitsTable(bytes, header, dataOffset, dataBytes, index, source, options.budget);
    hdus.push(hdu);
    if (truncated) break;
    offset = dataOffset + padded;
  }
  return { hdus, warnings };
}


// ---------------------------------------------------------------------------------------------
// Convenience entry points

export interface ReadFitsTableOptions extends ReadFitsOptions {
  /** HDU index or EXTNAME; default: the first BINTABLE HDU. */
  hdu?: number | string;
}

/** The first (or the chosen) binary table of a FITS file. */
export function readFitsTable(bytes: Uint8Array, options: ReadFitsTableOptions = {}): FitsTable & { hdu: FitsHdu } {
  const file = readFits(bytes, options);
  const source = options.source ?? 'FITS file';
  let hdu: FitsHdu | undefined;
  if (options.hdu === undefined) hdu = file.hdus.find((h) => h.kind === 'bintable');
  else if (typeof options.hdu === 'number') hdu = file.hdus[options.hdu];
  else hdu = file.hdus.find((h) => h.name.toUpperCase() === String(options.hdu).toUpperCase());
  const listing = file.hdus.map((h) => `${h.index}${h.name ? ` ${h.name}` : ''} (${h.kind})`).join(', ');
  if (!hdu) throw new FitsError(`${source}: no ${options.hdu === undefined ? 'binary table' : `HDU ${options.hdu}`} found; the file holds ${listing}`);
  if (!hdu.table) throw new FitsError(`${source}: HDU ${hdu.index} is ${hdu.kind === 'table' ? 'an ASCII table' : `a ${hdu.kind} HDU`}, not a binary table; the file holds ${listing}`, { hdu: hdu.index });
  return Object.assign(hdu.table, { hdu });
}

