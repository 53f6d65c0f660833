// The review desk's account of what FITS images gave the fit under review: each value measured on an
// image (band, magnitude, file), whether this fit used it and in place of which catalogue value, its
// residual, what the header said about the observation (the pointing is the frame's, not the
// star's), and whether it is set aside. Analysts and admins set such a value aside (with a reason)
// or use it again right here (decision 0025); a reviewer is told how to keep it out: flag the fit,
// or have an analyst set it aside on the star sheet.
import { useState } from 'react';
import { ApiError } from '../../../browser/api';
import { useMeasurementUse } from '../../../browser/review';
import { reviewReasonLabel } from '../../../contracts/review-reasons';
import type { SheetMeasurement, StarSheet } from '../../../contracts/review';

const fixed = (v: number | null | undefined, digits: number) => (v === null || v === undefined ? '—' : v.toFixed(digits));

/** What the header said about the observation, in one line. */
export function observationText(image: NonNullable<SheetMeasurement['image']>): string {
  const parts = [
    image.filter ? `filter ${image.filter}` : '',
    image.dateObs ?? '',
    image.exptimeS !== null ? `${image.exptimeS} s` : '',
    image.airmass !== null ? `airmass ${image.airmass}` : '',
  ].filter(Boolean);
  const pointing = image.pointingRaDeg !== null && image.pointingDecDeg !== null ? `; frame pointing RA ${fixed(image.pointingRaDeg, 4)}° Dec ${fixed(image.pointingDecDeg, 4)}° (the frame's, not the star's position)` : '';
  return `measured on a FITS image${parts.length ? `: ${parts.join(', ')}` : ''}${pointing}`;
}

export default function ImageValues({ campaignId, sheet, canSetAside }: { campaignId: string; sheet: StarSheet; canSetAside: boolean }) {
  const images = sheet.measurements.filter((m) => m.image);
  if (images.length === 0) return null;
  const used = images.filter((m) => m.inNewestFit === 'used').length;
  return (
    <section className="mt-4 border-t border-rule pt-3 text-sm" aria-labelledby="image-values-heading" data-testid="desk-image-values">
      <h3 id="image-values-heading" className="text-base font-semibold mb-1">From FITS images</h3>
      <p className="text-ink-600 mb-2" data-testid="desk-image-summary">
        {used === 0
          ? `This fit uses no value measured on an image (${images.length} ${images.length === 1 ? 'is' : 'are'} on record).`
          : `This fit uses ${used} value${used === 1 ? '' : 's'} measured on ${used === 1 ? 'an image' : 'images'}; a header gives one magnitude of one star, so check ${used === 1 ? 'it' : 'them'} against the curve.`}
      </p>
      <ul className="flex flex-col gap-2">
        {images.map((m) => (
          <ImageValue key={m.id} campaignId={campaignId} sheet={sheet} m={m} canSetAside={canSetAside} />
        ))}
      </ul>
    </section>
  );
}

function ImageValue({ campaignId, sheet, m, canSetAside }: { campaignId: string; sheet: StarSheet; m: SheetMeasurement; canSetAside: boolean }) {
  const use = useMeasurementUse(campaignId);
  const [reason, setReason] = useState('');
  const [error, setError] = useState<string | null>(null);
  const band = sheet.bands.find((b) => b.key === m.bandKey);
  // Other values of the band this one displaced (the fit records "another value in V was used (from <file>)").
  const displaced = m.inNewestFit === 'used' ? sheet.measurements.filter((o) => o.id !== m.id && o.bandKey === m.bandKey && o.inNewestFit === 'not_used' && (o.notUsedReason ?? '').includes(`(from ${m.source})`)) : [];
  const change = (useAgain: boolean) => {
    setError(null);
    use.mutate(
      { measurementIds: [m.id], use: useAgain, reason: useAgain ? undefined : reason.trim() },
      { onSuccess: () => setReason(''), onError: (err) => setError(err instanceof ApiError ? err.message : String(err)) },
    );
  };
  return (
    <li className="border-l-4 border-ember-600 pl-3" data-measurement={m.id} data-band={m.bandKey} data-in-fit={m.inNewestFit ?? ''} data-set-aside={m.setAside ? 'true' : 'false'}>
      <p>
        <strong>{m.bandKey}</strong> <span className="num">{m.mag !== null ? `${m.upperLimit ? '> ' : ''}${fixed(m.mag, 3)} ± ${fixed(m.magErr, 3)} mag` : m.fnuJy !== null ? `${m.fnuJy.toPrecision(4)} Jy` : '—'}</span> from {m.source}:{' '}
        <span data-testid="desk-image-use">
          {m.inNewestFit === 'used'
            ? `used in this fit${displaced.length ? ` in place of ${displaced.map((o) => o.source).join(', ')}` : ''}${band && band.residualSigma !== null ? `, residual ${band.residualSigma >= 0 ? '+' : ''}${band.residualSigma.toFixed(1)}σ${band.role === 'excluded' ? ' (not counted in the fit)' : ''}` : ''}`
            : m.inNewestFit === 'not_used'
              ? `not used in this fit${m.notUsedReason ? ` (${m.notUsedReason})` : ''}`
              : 'no fit yet'}
        </span>
      </p>
      {m.image && <p className="text-xs text-ink-600" data-testid="desk-image-observation">{observationText(m.image)}</p>}
      {m.setAside && (
        <p className="text-xs text-ink-700" data-testid="desk-image-set-aside">
          <strong>Set aside</strong>{m.setAside.by ? ` by ${m.setAside.by}` : ''}{m.setAside.reason ? `: “${m.setAside.reason}”` : ''}.{m.changedSinceFit ? ' It takes effect when this star is fitted again; the fit shown here was made before.' : ''}
        </p>
      )}
      {!m.setAside && m.changedSinceFit && <p className="text-xs text-ink-700">Used again since this fit: it takes effect when this star is fitted again.</p>}
      {canSetAside ? (
        m.setAside ? (
          <button type="button" className="btn btn-quiet py-0.5 px-2 text-xs mt-1" disabled={use.isPending} onClick={() => change(true)}>
            Use again in fits
          </button>
        ) : (
          <form
            className="flex flex-wrap items-end gap-2 mt-1"
            aria-label={`Set aside ${m.bandKey} from ${m.source}`}
            onSubmit={(e) => {
              e.preventDefault();
              change(false);
            }}
          >
            <label className="text-xs flex flex-col">
              Why leave it out of later fits?
              <input className="field-input py-1 text-xs" value={reason} onChange={(e) => setReason(e.target.value)} required maxLength={500} />
            </label>
            <button type="submit" className="btn btn-quiet py-0.5 px-2 text-xs" disabled={use.isPending}>
              Set aside
            </button>
          </form>
        )
      ) : (
        !m.setAside && (
          <p className="text-xs text-ink-600 mt-1" data-testid="desk-image-how-to-turn-off">
            To keep it out: flag this fit (“{reviewReasonLabel('bad_photometry')}”) and say so in the comment; the campaign’s analysts set values aside on the{' '}
            <a href={`/campaigns/${campaignId}/stars/${sheet.star.id}#measurements`}>star sheet</a>, and the star’s next fit leaves it out.
          </p>
        )
      )}
      {error && <p className="field-error text-xs" role="alert">{error}</p>}
    </li>
  );
}
