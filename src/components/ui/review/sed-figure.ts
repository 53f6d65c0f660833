// The SED and residual figure of one fit as Plotly traces: log λ (µm) against λF_λ, measured bands
// with error bars at their pivot wavelengths, the fitted band means as open markers, the fitted curve,
// and bands that did not count or lie beyond 3σ drawn with their own markers and the reason on hover.
// Below, the residuals in σ on the same wavelength axis; one beyond the panel's range sits at its edge,
// labelled with an arrow and its value. Pure: no React, no DOM.
import type { Data, Layout } from 'plotly.js';
import type { SheetBand, StarSheet } from '../../../contracts/review';

export const SED_COLOURS = {
  measured: '#151c2a', // ink-900
  model: '#3f87a3', // glacier-500
  curve: '#bb4a1b', // ember-600
  outlier: '#a4262c', // alarm-700
  excluded: '#8b95aa', // ink-400
  limit: '#4a5670', // ink-600
  grid: '#ddd4c4', // rule
  paper: '#fffdf9', // card
};

/** What each trace shows; also written into trace.meta so tests and readers can tell them apart. */
export type SedTraceRole = 'measured' | 'outlier' | 'excluded' | 'upper_limit' | 'model' | 'planck_model' | 'curve' | 'residual';

const fmt = (v: number) => v.toExponential(3);

const TICKS_UM = [0.1, 0.2, 0.3, 0.5, 1, 2, 3, 5, 10, 20, 30];

function hover(b: SheetBand): string {
  const lines = [
    `<b>${b.key}</b> · ${b.label}`,
    `pivot ${b.pivotUm.toFixed(4)} µm`,
    `λF<sub>λ</sub> ${fmt(b.observedLambdaFlux)} ± ${fmt(b.sigmaLambdaFlux)} erg s⁻¹ cm⁻²`,
  ];
  if (b.modelLambdaFlux !== null) lines.push(`model ${fmt(b.modelLambdaFlux)}`);
  if (b.planckModelLambdaFlux !== null) lines.push(`Planck fit ${fmt(b.planckModelLambdaFlux)}`);
  if (b.residualSigma !== null) lines.push(`residual ${b.residualSigma.toFixed(2)} σ`);
  if (b.note) lines.push(b.note);
  return lines.join('<br>');
}

function bandTrace(role: SedTraceRole, name: string, bands: SheetBand[], marker: Record<string, unknown>, errors: boolean): Data {
  return {
    type: 'scatter',
    mode: 'markers',
    name,
    meta: { role, bands: bands.map((b) => b.key) },
    x: bands.map((b) => b.pivotUm),
    y: bands.map((b) => b.observedLambdaFlux),
    customdata: bands.map((b) => b.key),
    error_y: errors ? { type: 'data', array: bands.map((b) => b.sigmaLambdaFlux), visible: true, color: marker.color as string, thickness: 1.2, width: 3 } : undefined,
    hovertext: bands.map(hover),
    hoverinfo: 'text',
    marker,
    xaxis: 'x',
    yaxis: 'y',
  } as Data;
}

export function sedFigure(sheet: Pick<StarSheet, 'bands' | 'curve'>, options: { compact?: boolean } = {}): { data: Data[]; layout: Partial<Layout> } {
  const bands = sheet.bands;
  const measured = bands.filter((b) => b.role === 'fitted' && !b.outlier);
  const outliers = bands.filter((b) => b.role === 'fitted' && b.outlier);
  const excluded = bands.filter((b) => b.role === 'excluded');
  const limits = bands.filter((b) => b.role === 'upper_limit');
  const withModel = bands.filter((b) => b.modelLambdaFlux !== null);
  // Set only when the fit used a photosphere model: the Planck fit's own band means beside it.
  const withPlanck = bands.filter((b) => b.planckModelLambdaFlux !== null);
  const size = options.compact ? 7 : 9;

  const data: Data[] = [];
  if (sheet.curve) {
    data.push({
      type: 'scatter',
      mode: 'lines',
      name: withPlanck.length ? 'Planck fit (blackbody)' : 'fitted blackbody',
      meta: { role: 'curve', teffK: sheet.curve.teffK },
      x: sheet.curve.wavelengthUm,
      y: sheet.curve.lambdaFlux,
      line: { color: SED_COLOURS.curve, width: 1.6 },
      hoverinfo: 'skip',
      xaxis: 'x',
      yaxis: 'y',
    } as Data);
  }
  if (withModel.length) {
    data.push({
      type: 'scatter',
      mode: 'markers',
      name: withPlanck.length ? 'photosphere model band means' : 'fitted band means',
      meta: { role: 'model', bands: withModel.map((b) => b.key) },
      x: withModel.map((b) => b.pivotUm),
      y: withModel.map((b) => b.modelLambdaFlux as number),
      customdata: withModel.map((b) => b.key),
      hovertext: withModel.map((b) => `<b>${b.key}</b> fitted band mean<br>λF<sub>λ</sub> ${fmt(b.modelLambdaFlux as number)} erg s⁻¹ cm⁻²`),
      hoverinfo: 'text',
      marker: { symbol: 'circle-open', size: size + 5, color: SED_COLOURS.model, line: { width: 1.6 } },
      xaxis: 'x',
      yaxis: 'y',
    } as Data);
  }
  if (withPlanck.length) {
    data.push({
      type: 'scatter',
      mode: 'markers',
      name: 'Planck fit band means',
      meta: { role: 'planck_model', bands: withPlanck.map((b) => b.key) },
      x: withPlanck.map((b) => b.pivotUm),
      y: withPlanck.map((b) => b.planckModelLambdaFlux as number),
      customdata: withPlanck.map((b) => b.key),
      hovertext: withPlanck.map((b) => `<b>${b.key}</b> Planck fit band mean<br>λF<sub>λ</sub> ${fmt(b.planckModelLambdaFlux as number)} erg s⁻¹ cm⁻²`),
      hoverinfo: 'text',
      marker: { symbol: 'x-thin-open', size: size + 2, color: SED_COLOURS.curve, line: { width: 1.4, color: SED_COLOURS.curve } },
      xaxis: 'x',
      yaxis: 'y',
    } as Data);
  }
  if (measured.length) data.push(bandTrace('measured', 'measured', measured, { symbol: 'circle', size, color: SED_COLOURS.measured }, true));
  if (outliers.length) data.push(bandTrace('outlier', 'more than 3σ off', outliers, { symbol: 'diamond', size: size + 2, color: SED_COLOURS.outlier }, true));
  if (excluded.length) data.push(bandTrace('excluded', 'not in the fit', excluded, { symbol: 'square-open', size, color: SED_COLOURS.excluded, line: { width: 1.6 } }, true));
  if (limits.length) data.push(bandTrace('upper_limit', 'upper limit', limits, { symbol: 'triangle-down', size: size + 2, color: SED_COLOURS.limit }, false));

  const withResidual = bands.filter((b) => b.residualSigma !== null);
  // The panel's range follows the bands of the fit; a band outside it (an excluded infrared excess,
  // say) sits at the edge, its true value in the hover text.
  const fitResiduals = withResidual.filter((b) => b.role !== 'excluded').map((b) => Math.abs(b.residualSigma as number));
  const maxRes = Math.max(4, ...fitResiduals.map((r) => r + 0.8));
  const edge = maxRes * 0.92;
  if (withResidual.length) {
    data.push({
      type: 'scatter',
      mode: 'markers',
      name: 'residual',
      showlegend: false,
      meta: { role: 'residual', bands: withResidual.map((b) => b.key) },
      x: withResidual.map((b) => b.pivotUm),
      y: withResidual.map((b) => Math.max(-edge, Math.min(edge, b.residualSigma as number))),
      customdata: withResidual.map((b) => b.key),
      hovertext: withResidual.map((b) => `<b>${b.key}</b> residual ${(b.residualSigma as number).toFixed(2)} σ${Math.abs(b.residualSigma as number) > edge ? ' (off the scale)' : ''}${b.note ? `<br>${b.note}` : ''}`),
      hoverinfo: 'text',
      marker: {
        size: size - 1,
        symbol: withResidual.map((b) => (b.role === 'excluded' ? 'square-open' : b.role === 'upper_limit' ? 'triangle-down' : b.outlier ? 'diamond' : 'circle')),
        color: withResidual.map((b) => (b.role === 'excluded' ? SED_COLOURS.excluded : b.outlier ? SED_COLOURS.outlier : SED_COLOURS.measured)),
      },
      xaxis: 'x',
      yaxis: 'y2',
    } as Data);
  }

  // A residual beyond the panel's edge is drawn at the edge and labelled there with an arrow and its
  // true value (a 16.5σ infrared excess would otherwise look like one of 4σ).
  const offScale = withResidual.filter((b) => Math.abs(b.residualSigma as number) > edge);
  const offScaleLabels = offScale.map((b) => {
    const r = b.residualSigma as number;
    return {
      // On a log axis an annotation's x is the logarithm of the value.
      x: Math.log10(b.pivotUm),
      y: r > 0 ? edge : -edge,
      xref: 'x',
      yref: 'y2',
      text: `${r > 0 ? '↑' : '↓'} ${b.key} ${r > 0 ? '+' : ''}${r.toFixed(1)}σ`,
      showarrow: false,
      xanchor: 'left',
      xshift: 6,
      font: { size: 10, color: SED_COLOURS.outlier },
      bgcolor: SED_COLOURS.paper,
    };
  });

  // The λF_λ range follows the data (the curve reaches far below it in the ultraviolet).
  const ys = bands.flatMap((b) => [b.observedLambdaFlux - b.sigmaLambdaFlux, b.observedLambdaFlux + b.sigmaLambdaFlux, b.modelLambdaFlux ?? NaN]).filter((v) => v > 0 && Number.isFinite(v));
  const lo = ys.length ? Math.log10(Math.min(...ys)) - 0.5 : undefined;
  const hi = ys.length ? Math.log10(Math.max(...ys)) + 0.35 : undefined;
  const xs = bands.map((b) => b.pivotUm);
  const xlo = Math.log10(Math.min(0.25, ...xs) * 0.8);
  const xhi = Math.log10(Math.max(5, ...xs) * 1.25);
  const font = { family: 'Inter Variable, ui-sans-serif, system-ui, sans-serif', size: options.compact ? 11 : 12, color: '#354057' };

  const layout: Partial<Layout> = {
    autosize: true,
    height: options.compact ? 320 : 520,
    margin: { l: 72, r: 16, t: 12, b: 48 },
    paper_bgcolor: SED_COLOURS.paper,
    plot_bgcolor: SED_COLOURS.paper,
    font,
    showlegend: !options.compact,
    legend: { orientation: 'h', x: 0, y: 1.02, yanchor: 'bottom', font: { size: 11 } },
    hovermode: 'closest',
    xaxis: {
      type: 'log',
      title: { text: 'wavelength λ (µm)' },
      range: [xlo, xhi],
      anchor: 'y2',
      tickvals: TICKS_UM,
      ticktext: TICKS_UM.map(String),
      gridcolor: SED_COLOURS.grid,
      zeroline: false,
    },
    yaxis: { type: 'log', title: { text: 'λF<sub>λ</sub> (erg s⁻¹ cm⁻²)' }, domain: [0.34, 1], range: lo !== undefined && hi !== undefined ? [lo, hi] : undefined, exponentformat: 'power', gridcolor: SED_COLOURS.grid },
    yaxis2: { title: { text: 'residual (σ)' }, domain: [0, 0.26], range: [-maxRes, maxRes], zeroline: true, zerolinecolor: '#66728b', gridcolor: SED_COLOURS.grid },
    annotations: offScaleLabels as Layout['annotations'],
    shapes: [-3, 3].map((y) => ({ type: 'line', xref: 'paper', x0: 0, x1: 1, yref: 'y2', y0: y, y1: y, line: { color: SED_COLOURS.outlier, width: 1, dash: 'dot' } })),
  };
  return { data, layout };
}
