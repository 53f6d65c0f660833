// The Plotly component built from the prebuilt minified bundle, so the full
// plotly.js source tree is never installed. Only for islands hydrated with client:only="react":
// Plotly needs the browser (`self is not defined` on the server).
import createPlotlyComponent from 'react-plotly.js/factory';
import type { PlotParams } from 'react-plotly.js';
import Plotly from 'plotly.js-dist-min';

const PlotlyPlot = createPlotlyComponent(Plotly);

/**
 * Every figure's settings: no Plotly logo, and no "Share chart" button. Plotly 4 shows that button
 * by default; it would send the figure to Plotly's own cloud service, which Starkiln never does
 * (without a server address it does nothing at all).
 */
export function Plot(props: PlotParams) {
  return <PlotlyPlot {...props} config={{ displaylogo: false, responsive: true, ...(props.config ?? {}), showSendToCloud: false }} />;
}
