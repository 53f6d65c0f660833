// Child process for tests/queue.test.ts: claims jobs from the given database in small chunks until
// none is left and prints the ids it got as JSON. Two of these race on one file.
import { openDatabase } from '../../src/db/client';
import { createSqliteQueue } from '../../src/server/queue';

const [file, owner, chunk] = process.argv.slice(2);
const { db, sqlite } = openDatabase(file);
const queue = createSqliteQueue(db);
const got: number[] = [];
for (;;) {
  const jobs = queue.claim(owner, Number(chunk), 60_000);
  if (jobs.length === 0) break;
  for (const j of jobs) got.push(j.id);
}
sqlite.close();
process.stdout.write(JSON.stringify(got));
