// Entry of a pool worker when brink runs from its TypeScript sources (tests, `npm run dev`):
// register the tsx loader in this thread, then load the worker itself (server/jobs/pool.ts
// passes its URL). Compiled JavaScript loads worker.js directly and never comes here.
import { workerData } from 'node:worker_threads';
import { register } from 'tsx/esm/api';

register();
await import(workerData.entry);
