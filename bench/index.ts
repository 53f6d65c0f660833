// `npm run bench`: every benchmark section, one after another, each in its own process so one
// section's memory and JIT state do not colour the next. Speeds are measured here, never in tests.
//   npm run bench                      all sections
//   npm run bench -- --only core,catalogue,export   some of them (extra flags are passed to each section)
import { spawnSync } from 'node:child_process';
import { existsSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';

const here = path.dirname(fileURLToPath(import.meta.url));

const SECTIONS: { name: string; file: string; what: string }[] = [
  { name: 'core', file: 'core.ts', what: 'fits per second of the science core, one thread and all cores, against two Python peers' },
  { name: 'cli', file: 'cli.ts', what: 'the whole starkiln fit command on 100 000 stars, CSV in and out' },
  { name: 'intake', file: 'intake.ts', what: 'upload + check + import through the built web server: a million stars and a 190 MB file, peak RSS, health latency' },
  { name: 'end-to-end', file: 'end-to-end.ts', what: 'CSV upload → stored results with two worker processes (SQLite queue)' },
  { name: 'catalogue', file: 'catalogue.ts', what: 'catalogue page requests on a million stored results (p50/p95)' },
  { name: 'export', file: 'export.ts', what: 'downloads of a million-row catalogue in CSV, VOTable, FITS and JSON (time, peak RSS)' },
  { name: 'readers', file: 'readers.ts', what: 'CSV, VOTable and FITS readers: time and memory held per table cell' },
  { name: 'redis', file: 'redis.ts', what: 'BullMQ on Redis: 1, 2 and 4 worker processes and the result writer' },
];

const args = process.argv.slice(2);
const onlyAt = args.indexOf('--only');
const only = onlyAt >= 0 ? new Set((args[onlyAt + 1] ?? '').split(',').filter(Boolean)) : null;
const passThrough = onlyAt >= 0 ? [...args.slice(0, onlyAt), ...args.slice(onlyAt + 2)] : args;
if (only) {
  const unknown = [...only].filter((n) => !SECTIONS.some((s) => s.name === n));
  if (unknown.length) {
    console.error(`bench: unknown section ${unknown.join(', ')}; sections: ${SECTIONS.map((s) => s.name).join(', ')}`);
    process.exit(64);
  }
}

console.log(`Starkiln bench — ${new Date().toISOString()} — ${os.cpus().length} cores, load ${os.loadavg().map((l) => l.toFixed(1)).join(' ')}`);
let failed = 0;
for (const section of SECTIONS) {
  if (only && !only.has(section.name)) continue;
  const file = path.join(here, section.file);
  if (!existsSync(file)) continue;
  console.log(`\n=== ${section.name}: ${section.what}\n`);
  const run = spawnSync(process.execPath, ['--import', 'tsx', file, ...passThrough], { stdio: 'inherit', cwd: path.join(here, '..') });
  if (run.status !== 0) {
    failed++;
    console.error(`bench: section ${section.name} exited with ${run.status ?? run.signal}`);
  }
}
process.exit(failed ? 1 : 0);
