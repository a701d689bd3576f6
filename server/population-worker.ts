/**
 * A worker thread that runs chunks of a population: told the scenario, the chunks and the
 * shared counter that hands them out, it plans (the same plan in every thread), takes chunks
 * until none is left, and posts each batch back with its arrays moved, not copied; then, when
 * asked, finds the bands over a share of the output times from the grids all threads share.
 */
import { parentPort } from 'node:worker_threads';
import { planPopulation, runBatch, summarise, type Batch, type PopulationPlan } from '../models/population/population.ts';
import { claimChunk, type BatchMessage, type ThreadRequest } from './population-threads.ts';
import { bandRange } from './population-local.ts';

function post(message: BatchMessage, transfer: ArrayBuffer[] = []): void {
  parentPort?.postMessage(message, transfer);
}

/** The arrays a batch moves to the other thread: all but a shared grid (shared, not moved). */
export function batchBuffers(b: Batch): ArrayBuffer[] {
  const buffers = [b.grid.buffer, b.figures.buffer, b.status.buffer, b.regimenFigures.buffer, b.regimenStatus.buffer];
  return buffers.filter((x): x is ArrayBuffer => x instanceof ArrayBuffer);
}

/** The plan of the chunks this thread ran, for a later share of the bands. */
let chunksPlan: PopulationPlan | null = null;

parentPort?.on('message', (request: ThreadRequest) => {
  try {
    if (request.kind === 'bands') {
      if (!chunksPlan) return post({ kind: 'problems', problems: [{ path: 'population', message: 'internal error: bands asked of a thread that ran no chunks' }] });
      const range = bandRange(chunksPlan, request.parts, request.from, request.to);
      return post({ kind: 'bands', ...range }, [range.values.buffer, ...(range.observations ? [range.observations.buffer] : [])] as ArrayBuffer[]);
    }
    const plan = planPopulation(request.scenario, request.overrides);
    if (!plan.ok) return post({ kind: 'problems', problems: plan.problems });
    if (request.kind === 'summarise') {
      const result = summarise(plan.value, request.batches);
      return post(result.ok ? { kind: 'summary', json: JSON.stringify(result.value) } : { kind: 'problems', problems: result.problems });
    }
    chunksPlan = plan.value;
    // Chunks until the shared counter runs past the last: each posted (its arrays moved) as it is done.
    const counter = new Int32Array(request.counter);
    const chunkCount = request.chunks.length / 2;
    for (let c = claimChunk(counter); c < chunkCount; c = claimChunk(counter)) {
      const batch = runBatch(plan.value, request.chunks[2 * c], request.chunks[2 * c + 1], undefined, request.sharedGrids);
      if (!batch.ok) return post({ kind: 'problems', problems: batch.problems });
      post({ kind: 'batch', batch: batch.value }, batchBuffers(batch.value));
    }
    post({ kind: 'finished' });
  } catch (e) {
    post({ kind: 'problems', problems: [{ path: 'population', message: `internal error in a population thread: ${e instanceof Error ? e.message : String(e)}` }] });
  }
});
post({ kind: 'ready' });
