// A passband curve (response against wavelength in µm) with its pivot wavelength marked, and
// optionally the curve of an earlier version for comparison. Plotly needs the browser: hydrate
// with client:only="react".
import { useState } from 'react';
import { Plot } from '../ui/review/Plot';

export interface CurveToDraw {
  name: string;
  wavelengthAngstrom: number[];
  response: number[];
  pivotAngstrom: number;
}

interface Props {
  curves: CurveToDraw[];
  height?: number;
}

const COLOURS = ['#bb4a1b', '#3f87a3', '#3d6b3a'];

export default function BandCurvePlot({ curves, height = 320 }: Props) {
  const [ready, setReady] = useState(false);
  const data = curves.flatMap((c, i) => {
    const peak = Math.max(...c.response);
    const colour = COLOURS[i % COLOURS.length];
    return [
      {
        type: 'scatter' as const,
        mode: 'lines+markers' as const,
        name: c.name,
        x: c.wavelengthAngstrom.map((w) => w / 1e4),
        y: c.response,
        line: { color: colour, width: 2, dash: i === 0 ? ('solid' as const) : ('dot' as const) },
        marker: { size: 3, color: colour },
        hovertemplate: '%{x:.4f} µm<br>response %{y:.4g}<extra></extra>',
      },
      {
        type: 'scatter' as const,
        mode: 'lines' as const,
        name: `${c.name}: pivot ${c.pivotAngstrom.toFixed(1)} Å`,
        x: [c.pivotAngstrom / 1e4, c.pivotAngstrom / 1e4],
        y: [0, peak * 1.05],
        line: { color: colour, width: 1, dash: 'dash' as const },
        hovertemplate: `pivot ${c.pivotAngstrom.toFixed(1)} Å<extra></extra>`,
      },
    ];
  });
  return (
    <figure className="m-0" data-testid="band-curve-plot" data-ready={ready ? 'true' : 'false'}>
      <Plot
        data={data}
        layout={{
          height,
          margin: { l: 56, r: 16, t: 12, b: 48 },
          paper_bgcolor: 'rgba(0,0,0,0)',
          plot_bgcolor: '#fffdf9',
          font: { family: 'Inter Variable, sans-serif', size: 12, color: '#354057' },
          xaxis: { title: { text: 'wavelength (µm)' }, gridcolor: '#ece5d8', zeroline: false },
          yaxis: { title: { text: 'response' }, gridcolor: '#ece5d8', rangemode: 'tozero' },
          legend: { orientation: 'h', y: -0.25 },
          showlegend: curves.length > 1,
        }}
        config={{ displaylogo: false, responsive: true, modeBarButtonsToRemove: ['lasso2d', 'select2d'] }}
        style={{ width: '100%' }}
        useResizeHandler
        onInitialized={() => setReady(true)}
      />
      <figcaption className="sr-only">
        {curves.map((c) => `${c.name}: ${c.wavelengthAngstrom.length} nodes from ${c.wavelengthAngstrom[0]} to ${c.wavelengthAngstrom[c.wavelengthAngstrom.length - 1]} Å, pivot ${c.pivotAngstrom.toFixed(1)} Å`).join('; ')}
      </figcaption>
    </figure>
  );
}
