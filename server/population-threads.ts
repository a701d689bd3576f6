/**
 * A population across worker threads on this machine: the subjects are split into one
 * contiguous range per thread, each thread runs its range (population-worker.ts), and the
 * batches come back in subject order. Subject i's numbers depend only on (seed, i), so the
 * result does not depend on the number of threads. Cancelling terminates the threads.
 */
import type { Batch, PopulationOverrides } from '../models/population/population.ts';
import { batchRanges } from '../models/population/ranges.ts';
import type { Outcome, Problem } from '../models/scenario/problems.ts';
import { startWorker, type WorkerModule } from './worker-pool.ts';

export interface BatchRequest {
  scenario: unknown;
  overrides: PopulationOverrides;
  first: number;
  count: number;
}

/** What a population thread is asked: run a batch, or summarise finished batches into the result's JSON. */
export type ThreadRequest = ({ kind: 'batch' } & BatchRequest) | { kind: 'summarise'; scenario: unknown; overrides: PopulationOverrides; batches: Batch[] };

export type BatchMessage =
  | { kind: 'ready' }
  | { kind: 'summary'; json: string }
  | { kind: 'progress'; done: number }
  | { kind: 'batch'; batch: Batch }
  | { kind: 'problems'; problems: Problem[] };

/** The population worker's TypeScript source (tests, tsx); the built one lies beside the built server. */
export const populationWorkerSource: WorkerModule = { kind: 'source', url: new URL('./population-worker.ts', import.meta.url) };

export function populationWorkerFor(metaUrl: string): WorkerModule {
  return metaUrl.endsWith('.js')
    ? { kind: 'built', url: new URL('./population-worker.js', metaUrl) }
    : populationWorkerSource;
}

export interface ThreadOptions {
  threads: number;
  worker: WorkerModule;
  /** Subjects to run (a shard's range); all of them when absent. */
  range?: { first: number; count: number };
  /** Told the subjects done so far, across threads. */
  onProgress?: (done: number, total: number) => void;
  signal?: AbortSignal;
  /** JavaScript heap of each thread, MB. */
  heapMb?: number;
}

/** Runs `range` (default: every subject) in up to `threads` threads; the batches in subject order. */
export async function runThreads(scenario: unknown, overrides: PopulationOverrides, subjects: number, options: ThreadOptions): Promise<Outcome<Batch[]> & { cancelled?: boolean }> {
  const range = options.range ?? { first: 0, count: subjects };
  const parts = batchRanges(range.count, options.threads).map((r) => ({ first: range.first + r.first, count: r.count }));
  const done = new Array<number>(parts.length).fill(0);
  const workers = parts.map(() =>
    startWorker(options.worker, options.heapMb ? { resourceLimits: { maxOldGenerationSizeMb: options.heapMb } } : {}),
  );
  const stopAll = () => workers.forEach((w) => void w.terminate());
  const report = () => options.onProgress?.(done.reduce((a, b) => a + b, 0), range.count);
  const runs = parts.map(
    (part, k) =>
      new Promise<Outcome<Batch>>((resolve) => {
        const w = workers[k];
        let settled = false;
        const settle = (o: Outcome<Batch>) => {
          if (settled) return;
          settled = true;
          resolve(o);
        };
        w.on('message', (m: BatchMessage) => {
          if (m.kind === 'ready') w.postMessage({ kind: 'batch', scenario, overrides, first: part.first, count: part.count } satisfies ThreadRequest);
          else if (m.kind === 'progress') {
            done[k] = m.done;
            report();
          } else if (m.kind === 'batch') {
            done[k] = part.count;
            report();
            settle({ ok: true, value: m.batch });
          } else if (m.kind === 'problems') settle({ ok: false, problems: m.problems });
        });
        w.on('error', (e) => settle({ ok: false, problems: [{ path: 'population', message: `a population thread failed: ${e.message}` }] }));
        w.on('exit', () => settle({ ok: false, problems: [{ path: 'population', message: options.signal?.aborted ? 'cancelled' : 'a population thread stopped unexpectedly' }] }));
      }),
  );
  const onAbort = () => stopAll();
  options.signal?.addEventListener('abort', onAbort, { once: true });
  try {
    const outcomes = await Promise.all(runs);
    if (options.signal?.aborted) return { ok: false, problems: [{ path: 'population', message: 'cancelled' }], cancelled: true };
    const failed = outcomes.find((o) => !o.ok);
    if (failed && !failed.ok) return failed;
    return { ok: true, value: outcomes.map((o) => (o as { ok: true; value: Batch }).value) };
  } finally {
    options.signal?.removeEventListener('abort', onAbort);
    stopAll();
  }
}

/**
 * The summary of finished batches as the result's JSON text, computed in a thread of its own
 * (the batches are moved there, not copied), so a server's request thread never spends the
 * seconds a large population's percentiles take.
 */
export function summariseInThread(scenario: unknown, overrides: PopulationOverrides, batches: Batch[], worker: WorkerModule): Promise<Outcome<string>> {
  return new Promise((resolve) => {
    const w = startWorker(worker);
    let settled = false;
    const settle = (o: Outcome<string>) => {
      if (settled) return;
      settled = true;
      resolve(o);
      void w.terminate();
    };
    w.on('message', (m: BatchMessage) => {
      if (m.kind === 'ready') {
        const buffers = batches.flatMap((b) => [b.grid.buffer, b.figures.buffer, b.status.buffer, b.regimenFigures.buffer, b.regimenStatus.buffer] as ArrayBuffer[]);
        w.postMessage({ kind: 'summarise', scenario, overrides, batches } satisfies ThreadRequest, buffers);
      } else if (m.kind === 'summary') settle({ ok: true, value: m.json });
      else if (m.kind === 'problems') settle({ ok: false, problems: m.problems });
    });
    w.on('error', (e) => settle({ ok: false, problems: [{ path: 'population', message: `the summary thread failed: ${e.message}` }] }));
    w.on('exit', () => settle({ ok: false, problems: [{ path: 'population', message: 'the summary thread stopped unexpectedly' }] }));
  });
}
