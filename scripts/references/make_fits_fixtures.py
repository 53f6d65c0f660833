#!/usr/bin/python3
"""Write the FITS fixtures that test Starkiln's own FITS reader (src/core/input/fits-file.ts).

Every fixture file is written by astropy (Debian python3-astropy 5.2), an independent FITS
implementation, and beside it we dump astropy's own reading of the file as JSON
(`<name>.astropy.json`): header cards in order and every table column, row by row. The TypeScript
tests compare our reader against that JSON, so the expected values never come from our code.

The real benchmark table (../shared/data/benchmark/gbs_v3_dev_half.fits, Gaia FGK benchmark stars
v3, Soubiran et al. 2024) is not copied; only astropy's reading of a few of its columns and rows is
dumped to `gbs_v3_dev_half.astropy.json`.

Usage: /usr/bin/python3 scripts/references/make_fits_fixtures.py [out_dir]
(default out_dir: fixtures/fits under the project root). Deterministic: running it twice gives the
same bytes, which a test checks when astropy is importable.
"""

import json
import math
import os
import sys
import warnings

import numpy as np
from astropy.io import fits
from astropy.table import Table
import astropy

ROOT = os.path.abspath(os.path.join(os.path.dirname(__file__), '..', '..'))
BENCHMARK = os.path.join(ROOT, '..', 'shared', 'data', 'benchmark', 'gbs_v3_dev_half.fits')

SAFE = 2**53


def jsonable(v):
    """Astropy/numpy value -> JSON. None stands for null (masked, TNULL or NaN)."""
    if v is None or v is np.ma.masked:
        return None
    if isinstance(v, np.ma.MaskedArray):
        return [jsonable(x) if not m else None for x, m in zip(v.data.tolist() if v.ndim else [v.data.item()], np.ma.getmaskarray(v).ravel().tolist())] if v.ndim == 1 else [jsonable(x) for x in v]
    if isinstance(v, np.ndarray):
        return [jsonable(x) for x in v]
    if isinstance(v, (bytes, np.bytes_)):
        return v.decode('ascii')
    if isinstance(v, (str, np.str_)):
        return str(v)
    if isinstance(v, (bool, np.bool_)):
        return bool(v)
    if isinstance(v, (int, np.integer)):
        i = int(v)
        return i if -SAFE < i < SAFE else {'int': str(i)}
    if isinstance(v, (complex, np.complexfloating)):
        return [float(v.real), float(v.imag)]
    if isinstance(v, (float, np.floating)):
        f = float(v)
        return None if math.isnan(f) else f
    if isinstance(v, (list, tuple)):
        return [jsonable(x) for x in v]
    raise TypeError(f'cannot encode {type(v)}')


def header_cards(header):
    out = []
    for card in header.cards:
        value = card.value
        if isinstance(value, fits.card.Undefined):
            value = None
        out.append([card.keyword, jsonable(value)])
    return out


def dump(path, max_rows=None, columns=None):
    """Astropy's reading of every HDU: header cards, and for tables the column values."""
    result = {'astropy': astropy.__version__, 'hdus': []}
    with fits.open(path) as hdul:
        for i, hdu in enumerate(hdul):
            entry = {'index': i, 'type': type(hdu).__name__, 'name': hdu.name, 'header': header_cards(hdu.header)}
            if isinstance(hdu, fits.BinTableHDU):
                with warnings.catch_warnings():
                    warnings.simplefilter('ignore')
                    table = Table.read(path, hdu=i, character_as_bytes=False, mask_invalid=True)
                names = columns if columns is not None else table.colnames
                n = len(table) if max_rows is None else min(max_rows, len(table))
                entry['rowCount'] = len(table)
                cols = {}
                for name in names:
                    col = table[name]
                    values = []
                    for r in range(n):
                        v = col[r]
                        if col.dtype.kind in 'US':
                            # Strings: astropy masks empty ones; the stored text is '' either way.
                            v = col.data[r] if not hasattr(col, 'mask') else np.ma.getdata(col)[r]
                        values.append(jsonable(v))
                    cols[name] = values
                entry['columns'] = cols
            elif isinstance(hdu, fits.TableHDU):
                entry['rowCount'] = len(hdu.data)
            elif hdu.data is not None and hasattr(hdu.data, 'shape'):
                entry['shape'] = list(hdu.data.shape)
                flat = np.asarray(hdu.data).ravel()
                entry['firstPixels'] = jsonable(flat[: min(6, flat.size)])
            result['hdus'].append(entry)
    return result


def all_types(path):
    """One binary table with every TFORM type, repeat counts, TDIM, NaN and variable-length arrays."""
    n = 4
    cols = [
        fits.Column(name='flag', format='L', array=np.array([True, False, True, False])),
        fits.Column(name='flags3', format='3L', array=np.array([[True, False, True], [False, False, False], [True, True, True], [False, True, False]])),
        fits.Column(name='bits', format='11X', array=np.array([[1, 0, 1, 1, 0, 0, 0, 1, 1, 0, 1]] * 2 + [[0] * 11, [1] * 11], dtype=bool)),
        fits.Column(name='byte', format='B', array=np.array([0, 1, 200, 255], dtype=np.uint8)),
        fits.Column(name='short', format='I', array=np.array([-32768, -1, 0, 32767], dtype=np.int16)),
        fits.Column(name='int', format='J', array=np.array([-2147483648, -7, 12345678, 2147483647], dtype=np.int32)),
        fits.Column(name='long', format='K', array=np.array([-9223372036854775808, -3, 4611686018427387905, 9223372036854775807], dtype=np.int64)),
        fits.Column(name='name', format='10A', array=np.array(['HD 10700', '', 'a''b "c"', 'ten chars!'])),
        fits.Column(name='float', format='E', unit='mag', array=np.array([1.5, np.nan, -3.25e-20, 3.4e38], dtype=np.float32)),
        fits.Column(name='double', format='D', unit='erg s-1 cm-2 A-1', array=np.array([5.670374419e-8, np.nan, -1e300, 0.1])),
        fits.Column(name='cfloat', format='C', array=np.array([1 + 2j, -0.5j, 3, np.nan], dtype=np.complex64)),
        fits.Column(name='cdouble', format='M', array=np.array([1e-300 + 2j, -1.25 - 0.5j, 0, 7j])),
        fits.Column(name='vec', format='3E', array=np.array([[1, 2, 3], [4, np.nan, 6], [7, 8, 9], [0, 0, 0]], dtype=np.float32)),
        fits.Column(name='ivec', format='2J', array=np.array([[1, -2], [3, -4], [5, -6], [7, -8]], dtype=np.int32)),
        fits.Column(name='matrix', format='6D', dim='(3,2)', array=np.arange(24, dtype=np.float64).reshape(n, 2, 3)),
        fits.Column(name='words', format='12A', dim='(4,3)', array=np.array([['ab', 'cd', 'efgh'], ['', 'x', 'yz'], ['1', '22', '333'], ['W1', 'W2', 'W3']])),
        fits.Column(name='varint', format='PJ()', array=np.array([np.array([1, 2, 3], dtype=np.int32), np.array([], dtype=np.int32), np.array([42], dtype=np.int32), np.array([-1, -2], dtype=np.int32)], dtype=object)),
        fits.Column(name='vardouble', format='QD()', array=np.array([np.array([0.5]), np.array([1.0, 2.0, 3.0]), np.array([], dtype=np.float64), np.array([np.pi])], dtype=object)),
    ]
    hdu = fits.BinTableHDU.from_columns(cols, name='ALLTYPES')
    fits.HDUList([fits.PrimaryHDU(), hdu]).writeto(path, overwrite=True)


def scaled(path):
    """TSCAL/TZERO scaling, unsigned-integer conventions, signed bytes and TNULL on every integer type.

    Columns are written as their stored values and TSCALn/TZEROn added afterwards, so the bytes on
    disk are exactly the ones listed here and the physical values are astropy's reading of them."""
    cols = [
        # Unsigned conventions (FITS Standard 4.0, Table 19): stored signed + TZERO.
        fits.Column(name='u16', format='I', array=np.array([-32768, -32767, 0, 32767], dtype=np.int16)),
        fits.Column(name='u32', format='J', array=np.array([-2147483648, -2147483647, 0, 2147483647], dtype=np.int32)),
        fits.Column(name='u64', format='K', array=np.array([-2**63, -2**63 + 1, 0, 2**63 - 1], dtype=np.int64)),
        # Signed bytes: stored unsigned + TZERO -128.
        fits.Column(name='i8', format='B', array=np.array([0, 127, 128, 255], dtype=np.uint8)),
        fits.Column(name='mag_milli', format='J', unit='mag', array=np.array([0, 1234, -5000, 2000], dtype=np.int32)),
        fits.Column(name='flux_scaled', format='E', array=np.array([1.0, 0.0, np.nan, -2.0], dtype=np.float32)),
        fits.Column(name='nb', format='B', null=255, array=np.array([1, 255, 3, 4], dtype=np.uint8)),
        fits.Column(name='ni', format='I', null=-999, array=np.array([10, -999, -999, 40], dtype=np.int16)),
        fits.Column(name='nj', format='J', null=-2147483648, array=np.array([-2147483648, 200, 300, 400], dtype=np.int32)),
        fits.Column(name='nk', format='K', null=999999, array=np.array([4295128739, 999999, 5, 6], dtype=np.int64)),
        # TNULL refers to the stored value, before scaling (FITS Standard 4.0, section 7.3.2).
        fits.Column(name='nscaled', format='I', null=-1, array=np.array([2, -1, 4, 6], dtype=np.int16)),
    ]
    scaling = (('u16', None, 32768), ('u32', None, 2147483648), ('u64', None, 9223372036854775808),
               ('i8', None, -128), ('mag_milli', 0.001, 10.0), ('flux_scaled', 2.5, -1.0), ('nscaled', 0.5, 100.0))
    hdu = fits.BinTableHDU.from_columns(cols, name='SCALED')
    fits.HDUList([fits.PrimaryHDU(), hdu]).writeto(path, overwrite=True)
    with fits.open(path, mode='update') as hdul:
        header = hdul[1].header
        for name, scale, zero in scaling:
            n = hdul[1].columns.names.index(name) + 1
            if scale is not None:
                header[f'TSCAL{n}'] = scale
            header[f'TZERO{n}'] = zero


def multi_hdu(path):
    """Primary image, IMAGE extension, ASCII TABLE extension and two binary tables: the reader must
    skip the non-table data by BITPIX, NAXISn, PCOUNT and GCOUNT and find both tables."""
    primary = fits.PrimaryHDU(np.arange(35, dtype=np.int16).reshape(5, 7))
    primary.header['OBJECT'] = 'Kestrel-7'
    image = fits.ImageHDU(np.linspace(0, 1, 2 * 3 * 5, dtype=np.float32).reshape(2, 3, 5), name='CUBE')
    ascii_table = fits.TableHDU.from_columns([
        fits.Column(name='a', format='I5', array=np.array([1, 22, 333])),
        fits.Column(name='b', format='E12.4', array=np.array([1.5, 2.5, 3.5])),
    ], name='ASCII')
    first = fits.BinTableHDU.from_columns([
        fits.Column(name='id', format='12A', array=np.array(['kst-0001', 'kst-0002'])),
        fits.Column(name='V', format='D', array=np.array([9.81, 10.02])),
    ], name='PHOT')
    second = fits.BinTableHDU.from_columns([
        fits.Column(name='band', format='2A', array=np.array(['J', 'H', 'Ks'])),
        fits.Column(name='zp', format='E', array=np.array([3.129e-10, 1.133e-10, 4.283e-11], dtype=np.float32)),
        fits.Column(name='var', format='PE()', array=np.array([np.array([1, 2], dtype=np.float32), np.array([3], dtype=np.float32), np.array([], dtype=np.float32)], dtype=object)),
    ], name='ZEROPTS')
    fits.HDUList([primary, image, ascii_table, first, second]).writeto(path, overwrite=True)


def image_header(path):
    """A small image with the per-observation keywords and the header syntax corner cases."""
    primary = fits.PrimaryHDU(np.zeros((4, 6), dtype=np.float32))
    h = primary.header
    h['OBJECT'] = ("Hollow Lantern 12", 'invented target name')
    h['FILTER'] = ('V', 'filter in beam')
    h['EXPTIME'] = (120.0, '[s] exposure time')
    h['DATE-OBS'] = ('2026-03-14T21:07:33.250', 'UTC start')
    h['AIRMASS'] = (1.234, 'airmass at start')
    h['RA'] = ('05:35:17.30', 'sexagesimal hours')
    h['DEC'] = ('-05:23:28.0', 'sexagesimal degrees')
    h['MAGZP'] = (24.812, 'photometric zero-point [mag]')
    h['MAGZPERR'] = (0.015, 'zero-point uncertainty [mag]')
    h['QUOTE'] = ("O'Brien's frame", 'embedded quotes')
    h['LONGSTR'] = ('A long string that goes on well past the sixty-eight characters that fit on one '
                    'header card, so astropy writes it with CONTINUE cards & an ampersand.')
    h['EMPTYSTR'] = ''
    h['NOVALUE'] = (None, 'undefined value')
    h['LOGIC'] = (False, 'logical false')
    h['BIGINT'] = 123456789012345678
    h['NEGFLT'] = -1.5e-12
    h['CPLX'] = (3 + 4j, 'complex value')
    h['HISTORY'] = 'made by scripts/references/make_fits_fixtures.py'
    h['COMMENT'] = 'Invented scenario: no real observatory.'
    h.append(fits.Card.fromstring('DEXP    =              1.5D+03 / exponent written with D'))
    h.append(fits.Card.fromstring('HIERARCH KILN DET GAIN = 1.75 / long keyword convention'))
    ext = fits.ImageHDU(np.ones((3, 3), dtype=np.int32), name='SCI')
    ext.header['CTYPE1'] = 'RA---TAN'
    ext.header['CTYPE2'] = 'DEC--TAN'
    ext.header['CRVAL1'] = 83.8221
    ext.header['CRVAL2'] = -5.3911
    ext.header['PHOTZP'] = 25.1
    fits.HDUList([primary, ext]).writeto(path, overwrite=True, output_verify='silentfix')


def main():
    out = sys.argv[1] if len(sys.argv) > 1 else os.path.join(ROOT, 'fixtures', 'fits')
    os.makedirs(out, exist_ok=True)
    makers = {'all_types': all_types, 'scaled': scaled, 'multi_hdu': multi_hdu, 'image_header': image_header}
    for name, make in makers.items():
        path = os.path.join(out, name + '.fits')
        make(path)
        with open(os.path.join(out, name + '.astropy.json'), 'w') as f:
            json.dump(dump(path), f, indent=1, sort_keys=True)
            f.write('\n')
    if os.path.exists(BENCHMARK):
        cols = ['hip', 'hip_int', 'hd', 'ra_j2000', 'teff', 'e_teff', 'parallax', 'parallax_error', 'j_m', 'ph_qual_tmass', 'source_id_gaiadr3', 'phot_g_mean_mag', 'phot_bp_mean_flux']
        with fits.open(BENCHMARK) as hdul:
            present = [c for c in cols if c in hdul[1].columns.names]
        result = dump(BENCHMARK, max_rows=12, columns=present)
        result['source'] = 'Gaia FGK benchmark stars v3 (Soubiran et al. 2024), ../shared/data/benchmark/gbs_v3_dev_half.fits; first 12 rows of a few columns as read by astropy'
        with open(os.path.join(out, 'gbs_v3_dev_half.astropy.json'), 'w') as f:
            json.dump(result, f, indent=1, sort_keys=True)
            f.write('\n')


if __name__ == '__main__':
    main()
