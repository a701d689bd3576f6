// Worker bootstrap: worker threads do not inherit the TypeScript loader, so register it
// here and then load the worker module named in workerData.
import { register } from 'tsx/esm/api';
import { workerData } from 'node:worker_threads';

register();
await import(workerData.module);
