// Shapes of the intake API's JSON (uploads, checks, imports, mapping presets, the validation report):
// built by src/server/intake, read by the intake islands. The column mapping itself is the core's type.
import type { DetectedMapping, Mapping, MappingRules } from '../core/input/mapping';
import type { DetectedFormat, ImageObservation } from '../core/input/table-file';

export interface ReportEntry {
  file: string;
  /** 1-based data row; 0 = the header or the whole file. */
  row: number;
  line?: number;
  column?: string;
  columnNumber?: number;
  severity: 'error' | 'warning';
  message: string;
}

export interface UploadSummary {
  id: string;
  originalName: string;
  sizeBytes: number;
  sha256: string;
  format: DetectedFormat | null;
  formatLabel: string | null;
  status: string;
  rowCount: number | null;
  importedRowCount: number | null;
  createdAt: string;
  importedAt: string | null;
  errorCount: number;
  warningCount: number;
}

export interface UploadDetail extends UploadSummary {
  columns: string[];
  units: (string | null)[];
  preview: string[][];
  detected: DetectedMapping | null;
  bandKeys: string[];
  observation?: ImageObservation;
  /** For an image: the band whose key matches FILTER, when one does. */
  suggestedBand?: string;
  report: ReportEntry[];
}

export interface CheckSummary {
  uploadId: string;
  rowCount: number;
  starCount: number;
  measurementCount: number;
  rejectedRows: number;
  excludedByQuality: number;
  errorCount: number;
  warningCount: number;
  report: ReportEntry[];
}

export interface ImportSummary extends CheckSummary {
  source: string;
  starsCreated: number;
  starsUpdated: number;
  measurementsCreated: number;
  measurementsUpdated: number;
  /** Stars and measurements the campaign holds after the import. */
  campaignStars: number;
  campaignMeasurements: number;
}

export interface MappingPresetView {
  id: string;
  name: string;
  mapping: Mapping;
  rules: MappingRules;
  createdAt: string;
}
