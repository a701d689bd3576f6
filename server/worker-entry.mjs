// Worker bootstrap for the TypeScript sources (tests, `tsx server/main.ts`): worker threads
// do not inherit the TypeScript loader, so register it here and then load the worker module
// named in workerData. The built server and command line start their built workers
// directly and never load this file (worker-pool.ts, startWorker).
import { register } from 'tsx/esm/api';
import { workerData } from 'node:worker_threads';

register();
await import(workerData.module);
