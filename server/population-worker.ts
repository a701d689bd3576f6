/**
 * A worker thread that runs batches of a population: told the scenario and a range of
 * subjects, it plans (the same plan in every thread), runs the subjects in turn, reports
 * progress, and posts the batch back with its arrays moved, not copied.
 */
import { parentPort } from 'node:worker_threads';
import { planPopulation, runBatch, summarise, type Batch } from '../models/population/population.ts';
import type { BatchMessage, ThreadRequest } from './population-threads.ts';

function post(message: BatchMessage, transfer: ArrayBuffer[] = []): void {
  parentPort?.postMessage(message, transfer);
}

export function batchBuffers(b: Batch): ArrayBuffer[] {
  return [b.grid.buffer, b.figures.buffer, b.status.buffer, b.regimenFigures.buffer, b.regimenStatus.buffer] as ArrayBuffer[];
}

parentPort?.on('message', (request: ThreadRequest) => {
  try {
    const plan = planPopulation(request.scenario, request.overrides);
    if (!plan.ok) return post({ kind: 'problems', problems: plan.problems });
    if (request.kind === 'summarise') {
      const result = summarise(plan.value, request.batches);
      return post(result.ok ? { kind: 'summary', json: JSON.stringify(result.value) } : { kind: 'problems', problems: result.problems });
    }
    // Progress at most every 1% of the batch (and at least every subject of a small one).
    const every = Math.max(1, Math.floor(request.count / 100));
    const batch = runBatch(plan.value, request.first, request.count, (done) => {
      if (done % every === 0 && done < request.count) post({ kind: 'progress', done });
    });
    if (!batch.ok) return post({ kind: 'problems', problems: batch.problems });
    post({ kind: 'batch', batch: batch.value }, batchBuffers(batch.value));
  } catch (e) {
    post({ kind: 'problems', problems: [{ path: 'population', message: `internal error in a population thread: ${e instanceof Error ? e.message : String(e)}` }] });
  }
});
post({ kind: 'ready' });
