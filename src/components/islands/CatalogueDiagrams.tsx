// Temperature–luminosity diagram and Teff histogram of the catalogue under the table's filter
// (Plotly; hydrate with client:only="react": Plotly needs the browser). Teff increases to the left,
// as is common practice for such diagrams. Each point opens its star sheet. Above the server's point
// limit the diagram arrives as a 2-D histogram (counts per Teff × log L cell); a cell click narrows
// the table to that cell's Teff range.
import { QueryClientProvider } from '@tanstack/react-query';
import { useEffect, useState } from 'react';
import { FILTER_EVENT, filterQuery, useCatalogueDiagrams, type CatalogueDiagrams as Diagrams } from '../../browser/catalogue';
import { getQueryClient } from '../../browser/query-client';
import { Plot } from '../ui/review/Plot';

interface Props {
  campaignId: string;
  initialQuery: string;
}

export default function CatalogueDiagrams(props: Props) {
  return (
    <QueryClientProvider client={getQueryClient()}>
      <DiagramsView {...props} />
    </QueryClientProvider>
  );
}

const STATUS_COLOUR: Record<string, string> = { accepted: '#bb4a1b', pending: '#66728b', flagged: '#a4262c' };
const STATUS_WORDS: Record<string, string> = { accepted: 'accepted', pending: 'unreviewed', flagged: 'flagged' };
const font = { family: 'Inter Variable, ui-sans-serif, system-ui, sans-serif', size: 12, color: '#212a3b' };
const layoutBase = { paper_bgcolor: 'rgba(0,0,0,0)', plot_bgcolor: '#fffdf9', font, margin: { l: 64, r: 16, t: 16, b: 52 }, hovermode: 'closest' as const };

function DiagramsView({ campaignId, initialQuery }: Props) {
  const [query, setQuery] = useState(filterQuery(initialQuery));
  useEffect(() => {
    const on = (e: Event) => setQuery((e as CustomEvent<string>).detail);
    window.addEventListener(FILTER_EVENT, on);
    return () => window.removeEventListener(FILTER_EVENT, on);
  }, []);
  const d = useCatalogueDiagrams(campaignId, query);
  if (d.isPending) return <p className="text-sm text-ink-500">Drawing the diagrams…</p>;
  if (d.error || !d.data) return <p className="notice notice-error" role="alert">The diagrams could not be loaded: {d.error?.message}</p>;
  return (
    <div className="grid lg:grid-cols-2 gap-6" data-testid="catalogue-diagrams">
      <figure className="card p-3">
        <TemperatureLuminosity data={d.data} campaignId={campaignId} />
        <figcaption className="text-xs text-ink-600 px-2 pb-1">
          Temperature–luminosity diagram: {d.data.placed.toLocaleString('en-US')} stars
          {d.data.density ? ' shown as counts per cell (too many to draw one by one; click a cell to list its Teff range)' : ' (click a star to open its sheet)'}.
          {d.data.withoutLum > 0 && ` ${d.data.withoutLum.toLocaleString('en-US')} with a Teff but no luminosity (no usable parallax) are left out.`}
        </figcaption>
      </figure>
      <figure className="card p-3">
        <Histogram data={d.data} />
        <figcaption className="text-xs text-ink-600 px-2 pb-1">Fitted blackbody temperatures (colour temperatures) of the stars in view; click a bar to list its stars.</figcaption>
      </figure>
    </div>
  );
}

function TemperatureLuminosity({ data, campaignId }: { data: Diagrams; campaignId: string }) {
  const xaxis = { title: { text: 'Teff [K]' }, autorange: 'reversed' as const, gridcolor: '#ece5d8', zeroline: false };
  if (data.density) {
    const g = data.density;
    const centres = (e: number[]) => e.slice(0, -1).map((v, i) => (v + e[i + 1]) / 2);
    const z = g.counts.map((row) => row.map((n) => (n === 0 ? null : n)));
    return (
      <Plot
        data={[{ type: 'heatmap', x: centres(g.teffEdgesK), y: centres(g.logLumEdges), z, colorscale: [[0, '#fcebdd'], [0.3, '#ec8f58'], [0.7, '#bb4a1b'], [1, '#0e131d']], colorbar: { title: { text: 'stars' } }, hovertemplate: 'Teff %{x:.0f} K<br>log L/L☉ %{y:.2f}<br>%{z} stars<extra></extra>' }]}
        layout={{ ...layoutBase, height: 380, xaxis, yaxis: { title: { text: 'log₁₀ L [L☉]' }, gridcolor: '#ece5d8' } }}
        config={{ displaylogo: false, responsive: true }}
        style={{ width: '100%' }}
        onClick={(e) => showTeffBin(g.teffEdgesK, Number(e.points[0]?.x))}
      />
    );
  }
  const points = data.points ?? [];
  const groups = ['accepted', 'pending', 'flagged'].map((status) => points.filter((p) => p.reviewStatus === status)).filter((g) => g.length > 0);
  return (
    <Plot
      data={groups.map((g) => ({
        type: 'scatter' as const,
        mode: 'markers' as const,
        name: STATUS_WORDS[g[0].reviewStatus] ?? g[0].reviewStatus,
        x: g.map((p) => p.teffK),
        y: g.map((p) => p.lumLsun),
        text: g.map((p) => p.starKey),
        customdata: g.map((p) => p.starId),
        marker: { size: 6, color: STATUS_COLOUR[g[0].reviewStatus] ?? '#354057', opacity: 0.8 },
        hovertemplate: '%{text}<br>Teff %{x:.0f} K<br>L %{y:.3g} L☉<extra></extra>',
      }))}
      layout={{ ...layoutBase, height: 380, xaxis, yaxis: { title: { text: 'L [L☉]' }, type: 'log', gridcolor: '#ece5d8' }, legend: { orientation: 'h', y: 1.08 } }}
      config={{ displaylogo: false, responsive: true }}
      style={{ width: '100%' }}
      onClick={(e) => {
        const starId = e.points[0]?.customdata;
        if (starId !== undefined) window.location.href = `/campaigns/${encodeURIComponent(campaignId)}/stars/${String(starId)}`;
      }}
    />
  );
}

/** Lists the stars of the Teff bin holding x (bin edges in K): the table below with a Teff filter. */
function showTeffBin(edgesK: number[], x: number) {
  const i = edgesK.findIndex((edge, k) => k > 0 && x < edge) - 1;
  if (i < 0) return;
  const p = new URLSearchParams(window.location.search);
  p.set('teffMin', Math.floor(edgesK[i]).toFixed(0));
  p.set('teffMax', Math.ceil(edgesK[i + 1]).toFixed(0));
  p.delete('after');
  p.delete('before');
  window.location.search = p.toString();
}

/** A tick step of 1, 2 or 5 × 10^k stars giving about five ticks: never a fraction of a star. */
function starTickStep(maxCount: number): number {
  const raw = Math.max(1, maxCount / 5);
  const p = 10 ** Math.floor(Math.log10(raw));
  return ([1, 2, 5, 10].find((m) => m * p >= raw) ?? 10) * p;
}

function Histogram({ data }: { data: Diagrams }) {
  const e = data.histogram.edgesK;
  if (e.length === 0) return <p className="text-sm text-ink-500 p-4">No star in view has a fitted temperature.</p>;
  const x = e.slice(0, -1).map((v, i) => (v + e[i + 1]) / 2);
  const width = e.length > 1 ? e[1] - e[0] : 1;
  return (
    <Plot
      data={[{ type: 'bar', x, y: data.histogram.counts, width: x.map(() => width), marker: { color: '#3f87a3' }, hovertemplate: '%{x:.0f} K: %{y} stars<extra></extra>' }]}
      layout={{ ...layoutBase, height: 380, bargap: 0.05, xaxis: { title: { text: 'Teff [K]' }, autorange: 'reversed', gridcolor: '#ece5d8' }, yaxis: { title: { text: 'stars' }, gridcolor: '#ece5d8', rangemode: 'tozero', tickformat: 'd', dtick: starTickStep(Math.max(0, ...data.histogram.counts)) } }}
      config={{ displaylogo: false, responsive: true }}
      style={{ width: '100%' }}
      onClick={(ev) => showTeffBin(e, Number(ev.points[0]?.x))}
    />
  );
}
