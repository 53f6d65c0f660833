// Opens DATABASE file argv[2] and migrates it at wall-clock time argv[3] (ms), so several processes
// started one after another hit the empty file at the same moment.
import { openDatabase } from '../../src/db/client';
import { migrateDatabase } from '../../src/db/migrate';

const [file, at] = process.argv.slice(2);
const opened = openDatabase(file);
const wait = Number(at) - Date.now();
if (wait > 0) Atomics.wait(new Int32Array(new SharedArrayBuffer(4)), 0, 0, wait);
migrateDatabase(opened.db);
opened.sqlite.close();
process.stdout.write('migrated\n');
