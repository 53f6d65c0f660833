// Reading input tables: the format comes from the content (table-file.ts: CSV/TSV, VOTable, FITS
// table or image), and every table is handed over as one ColumnTable. What its columns mean, and
// the checks on every row, are core/input/mapping's (detectMapping, checkMapping, applyMapping), the one
// path the web intake and `starkiln fit` share.
export { DETECTED_FORMATS, FORMAT_LABELS, readUpload, sniffFormat, UnreadableFile, voTableAsColumns, type DetectedFormat, type ImageObservation, type ReadUpload, type ReadUploadOptions, type XmlTableReader } from './table-file';
export { DelimitedError, decodeText, type DelimitedTable, type Delimiter } from './delimited';
export { parseDelimited } from './delimited-stream';
export { FitsError, readFits, readFitsTable, readFitsImageHeader, type FitsFile, type FitsHdu, type FitsTable, type FitsObservationMeta } from './fits-file';
export { readVoTable, VoTableError } from './votable';
