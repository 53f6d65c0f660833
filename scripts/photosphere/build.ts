// Builds the Kiln photosphere model (src/core/photosphere/photosphere-v1.json) from the real stars in
// ../shared/data, with its provenance, residual scatter per band and range, the calibration term and
// the leave-one-out accuracy (decision 0022). Run:  npx tsx scripts/photosphere/build.ts
// A new band library version with a changed curve or zero-point needs a rebuild and a new MODEL_VERSION.
import { writeFileSync } from 'node:fs';
import path from 'node:path';
import { benchmarkCalibrators, calibPoints, root, sequenceCalibrators } from './calibrators';
import { buildData, leaveOutFits, teffTermFrom, type LooFit } from './loo';
import { median, robustSigma } from '../../src/core/photosphere/calibrate';

function summary(fits: LooFit[], pick: (f: LooFit) => boolean, label: string) {
  const f = fits.filter((x) => x.result && pick(x));
  if (f.length === 0) return { label, n: 0 };
  const d = f.map((x) => Math.expm1(x.dLnT));
  const dbb = f.map((x) => Math.expm1(x.dLnTbb));
  const cover = f.filter((x) => Math.abs(x.result!.teffK! - x.cal.teffK) <= Math.hypot(x.result!.teffErrK!, x.cal.teffErrK)).length / f.length;
  const r = (v: number) => Math.round(v * 1e4) / 1e4;
  return { label, n: f.length, medianDT: r(median(d)), robustScatter: r(robustSigma(d)), worstAbs: r(Math.max(...d.map(Math.abs))), coverage1s: r(cover), planckMedianDT: r(median(dbb)) };
}

function main(): void {
  const t0 = Date.now();
  const seq = sequenceCalibrators();
  const bench = benchmarkCalibrators();
  const points = calibPoints([...seq, ...bench]);
  // Leave-one-out fits of every calibrator (sequence types inside 2300–10 800 K and all benchmark stars).
  const targets = [...seq.filter((c) => c.teffK >= 2300 && c.teffK <= 16000), ...bench];
  const loo = leaveOutFits(points, targets);
  const teffTerm = teffTermFrom(loo);
  // Accuracy with the term in place (coverage needs it), still leave-one-out.
  const loo2 = leaveOutFits(points, targets, undefined, teffTerm);
  const data = buildData(points, undefined, teffTerm);
  const near = (x: LooFit) => x.cal.fehDex !== null && Math.abs(x.cal.fehDex) <= 0.5;
  data.accuracy = {
    method: 'leave-one-out: each star fitted with a model built without it (sequence: without its own type), with its known class; figures are T_fit/Teff − 1.',
    sequence: [
      summary(loo2, (x) => x.cal.source === 'sequence' && x.cal.teffK >= 9700 * 0.999 === false && x.cal.teffK >= 7300, 'A5V–F0V (7300–9700 K)'),
      summary(loo2, (x) => x.cal.source === 'sequence' && x.cal.teffK <= 9700 && x.cal.teffK >= 2810, 'A0V–M6V'),
      summary(loo2, (x) => x.cal.source === 'sequence' && x.cal.teffK < 3900 && x.cal.teffK >= 2810, 'M0V–M6V'),
      summary(loo2, (x) => x.cal.source === 'sequence' && x.cal.teffK >= 3900 && x.cal.teffK < 5300, 'K dwarfs'),
      summary(loo2, (x) => x.cal.source === 'sequence' && x.cal.teffK >= 5300 && x.cal.teffK < 7300, 'F5–G dwarfs'),
    ],
    benchmarkDwarfs: [4000, 5000, 6000].map((lo) => summary(loo2, (x) => x.cal.source === 'benchmark' && x.cal.cls === 'dwarf' && near(x) && x.cal.teffK >= lo && x.cal.teffK < lo + 1000, `${lo}–${lo + 1000} K`)),
    benchmarkGiants: [summary(loo2, (x) => x.cal.source === 'benchmark' && x.cal.cls === 'giant' && near(x), '3700–5100 K')],
    benchmarkMetalPoor: [summary(loo2, (x) => x.cal.source === 'benchmark' && !near(x), '|[Fe/H]| > 0.5 (not calibrators)')],
  };
  writeFileSync(path.join(root, 'src/core/photosphere/photosphere-v1.json'), JSON.stringify(data, null, 1) + '\n');
  console.log(JSON.stringify({ teffTerm, accuracy: data.accuracy }, null, 1));
  console.log(`built in ${((Date.now() - t0) / 1000).toFixed(1)} s`);
}

main();
