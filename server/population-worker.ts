/**
 * A worker thread that runs chunks of a population: told the scenario, the chunks and the
 * shared counter that hands them out, it plans (the same plan in every thread), takes chunks
 * until none is left, and posts each batch back with its arrays moved, not copied.
 */
import { parentPort } from 'node:worker_threads';
import { planPopulation, runBatch, summarise, type Batch } from '../models/population/population.ts';
import { claimChunk, type BatchMessage, type ThreadRequest } from './population-threads.ts';

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
    // Chunks until the shared counter runs past the last: each posted (its arrays moved) as it is done.
    const counter = new Int32Array(request.counter);
    const chunkCount = request.chunks.length / 2;
    for (let c = claimChunk(counter); c < chunkCount; c = claimChunk(counter)) {
      const batch = runBatch(plan.value, request.chunks[2 * c], request.chunks[2 * c + 1]);
      if (!batch.ok) return post({ kind: 'problems', problems: batch.problems });
      post({ kind: 'batch', batch: batch.value }, batchBuffers(batch.value));
    }
    post({ kind: 'finished' });
  } catch (e) {
    post({ kind: 'problems', problems: [{ path: 'population', message: `internal error in a population thread: ${e instanceof Error ? e.message : String(e)}` }] });
  }
});
post({ kind: 'ready' });
