// A proposals worker that dies unheard (as one out of memory would): it takes a chunk from the
// shared counter and never posts it. Plain JavaScript, started as a built worker by the threads test.
import { workerData } from 'node:worker_threads';

Atomics.add(new Int32Array(workerData.state), 0, 1);
setInterval(() => undefined, 1000);
