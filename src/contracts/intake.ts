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
  /** The mapping and rules of the upload's latest check (the one an import of it uses), when one was made. */
  checked: { mapping: Mapping; rules: MappingRules } | null;
  bandKeys: string[];
  observation?: ImageObservation;
  /** For an image: the band whose key matches FILTER, when one does. */
  suggestedBand?: string;
  report: ReportEntry[];
  /** The upload's latest job (its reading right after arrival, or a check or import). */
  job: IntakeJobView | null;
}

export interface CheckSummary {
  uploadId: string;
  rowCount: number;
  starCount: number;
  measurementCount: number;
  rejectedRows: number;
  excludedByQuality: number;
  /** Values left out by the survey rules (saturation, catalogue flags, BP/RP excess); absent in checks stored before them. */
  leftOutBySurveyRules?: number;
  /** Values read as upper limits by the catalogue's own convention (2MASS U, AllWISE null error). */
  nativeUpperLimits?: number;
  /** Stars flagged possible_companion (Gaia RUWE above 1.4, G ≥ 6). */
  possibleCompanions?: number;
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
  /** Values the input rules left out, kept on record with their reason (decision 0028). */
  valuesLeftOut: number;
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

/** An intake job (reading, checking or importing an upload) as the intake page and API show it. */
export interface IntakeJobView {
  id: string;
  uploadId: string;
  kind: 'read' | 'check' | 'import';
  status: 'pending' | 'running' | 'done' | 'failed';
  /** What the job is doing now: reading the file (rows so far) or writing the stars. */
  phase: 'waiting' | 'reading' | 'importing' | 'finished';
  rowsRead: number;
  /** Stars written so far while importing. */
  starsWritten: number;
  createdAt: string;
  startedAt: string | null;
  finishedAt: string | null;
  /** When done: the check (kind check) or import (kind import) summary. */
  check?: CheckSummary;
  import?: ImportSummary;
  /** When failed: the answer the request would have had (status 422 with the report, 409, …). */
  refusal?: { status: number; error: { code: string; message: string }; report?: ReportEntry[]; summary?: unknown };
}

/** The window event an import's page sends with the campaign's new totals, so counts outside the form follow. */
export const CAMPAIGN_COUNTS_EVENT = 'starkiln:campaign-counts';
export interface CampaignCounts {
  stars: number;
  measurements: number;
}
