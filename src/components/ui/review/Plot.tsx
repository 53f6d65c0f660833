// The Plotly component built from the prebuilt minified bundle, so the full
// plotly.js source tree is never installed. Only for islands hydrated with client:only="react":
// Plotly needs the browser (`self is not defined` on the server).
import createPlotlyComponent from 'react-plotly.js/factory';
import Plotly from 'plotly.js-dist-min';

export const Plot = createPlotlyComponent(Plotly);
