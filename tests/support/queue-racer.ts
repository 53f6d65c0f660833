// Child process for tests/queue.test.ts: opens the database, says "ready", waits for the go file so
// both racers start claiming at the same moment, claims in small chunks until none is left and
// prints the ids it got as JSON on its last line. Two of these race on one file.
import { existsSync } from 'node:fs';
import { openDatabase } from '../../src/db/client';
import { createSqliteQueue } from '../../src/server/queue';

const [file, owner, chunk, goFile] = process.argv.slice(2);
const { db, sqlite } = openDatabase(file);
const queue = createSqliteQueue(db);
process.stdout.write('ready\n');
while (!existsSync(goFile)) await new Promise((r) => setTimeout(r, 2));
const got: number[] = [];
for (;;) {
  const jobs = queue.claim(owner, Number(chunk), 60_000);
  if (jobs.length === 0) break;
  for (const j of jobs) got.push(j.id);
  // A real worker fits its chunk between claims; yielding here lets the other racer in.
  await new Promise((r) => setImmediate(r));
}
sqlite.close();
process.stdout.write(JSON.stringify(got) + '\n');
