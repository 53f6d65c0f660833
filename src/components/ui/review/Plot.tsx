// The Plotly component built from the prebuilt minified bundle (stack-notes gotcha 1), so the full
// plotly.js source tree is never installed. Only for islands hydrated with client:only="react":
// Plotly needs the browser (gotcha 2).
import createPlotlyComponent from 'react-plotly.js/factory';
import Plotly from 'plotly.js-dist-min';

export const Plot = createPlotlyComponent(Plotly);
