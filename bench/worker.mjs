// worker_threads entry for `npm run bench`: the bench runs under tsx, whose loader does not reach worker
// threads by itself, so register it here and load the TypeScript worker.
import { register } from 'tsx/esm/api';

register();
await import('./fit-worker.ts');
