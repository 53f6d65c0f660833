// The star sheet's SED and residual plot (Plotly). Hydrated with client:only="react": Plotly needs
// the browser. The same numbers are in the server-rendered band table beside it, and a short text
// summary here says which band is drawn where, for screen readers and tests.
import { useState } from 'react';
import type { StarSheet } from '../../contracts/review';
import { Plot } from '../ui/review/Plot';
import { sedFigure } from '../ui/review/sed-figure';

interface Props {
  starKey: string;
  bands: StarSheet['bands'];
  curve: StarSheet['curve'];
  compact?: boolean;
}

export default function StarSedPlot({ starKey, bands, curve, compact = false }: Props) {
  const [ready, setReady] = useState(false);
  const { data, layout } = sedFigure({ bands, curve }, { compact });
  if (bands.length === 0) {
    return <p className="text-sm text-ink-600">No fitted bands to draw for {starKey}.</p>;
  }
  return (
    <figure className="m-0" data-testid="sed-plot" data-ready={ready ? 'true' : 'false'} data-star={starKey}>
      <Plot
        data={data}
        layout={layout}
        config={{ displaylogo: false, responsive: true, modeBarButtonsToRemove: ['lasso2d', 'select2d'], toImageButtonOptions: { filename: `starkiln-sed-${starKey}` } }}
        style={{ width: '100%' }}
        useResizeHandler
        onInitialized={() => setReady(true)}
      />
      <figcaption className="sr-only" data-testid="sed-summary">
        Spectral energy distribution of {starKey}:{' '}
        {bands.map((b) => `${b.key} at ${b.pivotUm.toFixed(3)} µm${b.note ? ` (${b.note})` : ''}`).join('; ')}.
        {curve ? ` Fitted blackbody curve at ${Math.round(curve.teffK)} K.` : ' No fitted curve.'}
      </figcaption>
    </figure>
  );
}
