// Why a reviewer flags a fit: short codes of our own with plain labels, defined once and shared by
// the server (validation), the pages and the review desk island. Import-free on purpose.

export const REVIEW_REASONS = [
  { code: 'poor_fit', label: 'The curve does not follow the photometry' },
  { code: 'bad_photometry', label: 'One or more measurements look wrong' },
  { code: 'ir_excess', label: 'Infrared excess: dust or a companion' },
  { code: 'blend_suspected', label: 'Possibly blended with a neighbour' },
  { code: 'wrong_match', label: 'Measurements of different stars mixed together' },
  { code: 'needs_refit', label: 'Needs a re-fit with other options' },
  { code: 'other', label: 'Something else (say what in the comment)' },
] as const;

export type ReviewReason = (typeof REVIEW_REASONS)[number]['code'];

export const REVIEW_REASON_CODES = REVIEW_REASONS.map((r) => r.code) as [ReviewReason, ...ReviewReason[]];

export function reviewReasonLabel(code: string | null | undefined): string {
  if (!code) return '';
  return REVIEW_REASONS.find((r) => r.code === code)?.label ?? code;
}

/** What a fit's review status means, in the words the pages use. */
export const REVIEW_STATUS_LABELS: Record<string, string> = {
  pending: 'waiting for review',
  accepted: 'accepted',
  flagged: 'flagged',
  superseded: 'replaced by a newer fit',
};

/** What the queue and bulk actions filter on. */
export interface ReviewFilter {
  /** Reduced χ² strictly below this. */
  chi2RedBelow?: number;
  /** Only fits without any quality flag. */
  noFlags?: boolean;
  teffMinK?: number;
  teffMaxK?: number;
  batchId?: string;
}
