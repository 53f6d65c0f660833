// plotly.js-dist-min ships no types; it is the plotly.js API, which @types/plotly.js describes.
declare module 'plotly.js-dist-min' {
  import Plotly from 'plotly.js';
  export default Plotly;
}
