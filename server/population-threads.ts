/**
 * A population across threads on this machine. The subjects are cut into chunks; every thread
 * (population-worker.ts), and the calling thread too when it is given the plan, takes the next
 * chunk from one shared counter until none is left, so a thread still starting or a slower one
 * takes fewer, and the calling thread works while the others load the engine. The batches
 * come back in subject order. Subject i's numbers depend only on (seed, i), so the result does
 * not depend on the number of threads or on who ran which chunk. Cancelling terminates the threads.
 */
import type { Batch, ComputedBands, GridPart, PopulationOverrides, PopulationPlan } from '../models/population/population.ts';
import { chunkRanges } from '../models/population/ranges.ts';
import type { Outcome, Problem } from '../models/scenario/problems.ts';
import type { BandRange } from './population-local.ts';
import { startWorker, type WorkerModule } from './worker-pool.ts';

export interface ChunkRequest {
  scenario: unknown;
  overrides: PopulationOverrides;
  /** The chunks, [first, count] pairs in subject order; chunk c is taken by whoever adds 1 to counter[0] and gets c. */
  chunks: Int32Array;
  counter: SharedArrayBuffer;
  /** Keep the grids in SharedArrayBuffers (the bands are found by several threads later). */
  sharedGrids: boolean;
}

/** The bands over output times [from, to) of the population whose chunks the thread ran (its grids shared, not copied). */
export interface BandsRequest {
  parts: GridPart[];
  from: number;
  to: number;
}

/** What a population thread is asked: run chunks, then perhaps a share of the bands; or summarise finished batches into the result's JSON. */
export type ThreadRequest = ({ kind: 'chunks' } & ChunkRequest) | ({ kind: 'bands' } & BandsRequest) | { kind: 'summarise'; scenario: unknown; overrides: PopulationOverrides; batches: Batch[] };

export type BatchMessage =
  | { kind: 'ready' }
  | { kind: 'summary'; json: string }
  | { kind: 'batch'; batch: Batch }
  | { kind: 'finished' }
  | ({ kind: 'bands' } & BandRange)
  | { kind: 'problems'; problems: Problem[] };

/** The population worker's TypeScript source (tests, tsx); the built one lies beside the built server. */
export const populationWorkerSource: WorkerModule = { kind: 'source', url: new URL('./population-worker.ts', import.meta.url) };

export function populationWorkerFor(metaUrl: string): WorkerModule {
  return metaUrl.endsWith('.js')
    ? { kind: 'built', url: new URL('./population-worker.js', metaUrl) }
    : populationWorkerSource;
}

export interface ThreadOptions {
  /** Threads that compute subjects, the calling one included when `plan` is given. */
  threads: number;
  worker: WorkerModule;
  /**
   * The plan of the population, when the calling thread may compute subjects too (the command
   * line); without it only worker threads compute (a server's request thread must stay free).
   */
  plan?: PopulationPlan;
  /** Subjects to run (a shard's range); all of them when absent. */
  range?: { first: number; count: number };
  /** Told the subjects done so far, across threads. */
  onProgress?: (done: number, total: number) => void;
  signal?: AbortSignal;
  /** JavaScript heap of each thread, MB. */
  heapMb?: number;
  /**
   * Start the worker threads at once (a thread count the user asked for), rather than only when
   * the calling thread finds the work left worth them (workersWorthIt).
   */
  workersAtOnce?: boolean;
  /**
   * Also compute the bands (needs `plan`): when every chunk is done, the output times are split
   * between the threads, each finding the percentiles of its share from the shared grids.
   */
  bands?: boolean;
}

/** The engine's side of this thread (population-local.ts), loaded only when this thread computes. */
type Local = typeof import('./population-local.ts');

/** Takes the next chunk index from the shared counter (Atomics: each index is handed out once). */
export function claimChunk(counter: Int32Array): number {
  return Atomics.add(counter, 0, 1);
}

/**
 * Whether to start worker threads now, the calling thread having computed for `ranMs` and the
 * subjects left being due to take it `leftMs` more (at the median rate of its last three chunks). A worker
 * costs about half a second of a core before it computes (loading the engine, then the
 * compiler warming to the code: measured on 2 cores, a year of hourly bands for 1,000
 * subjects took 1.1 s on one thread and 1.3–1.4 s on two, 1,000 × 500 times 0.63 s against
 * 0.96 s, while 10,000 × 500 times took 3.5 s against 3.2 s and a saturable model 4.7 s
 * against 3.5 s). A worker started later does no better: started after a quarter or half a
 * second, when 300–400 ms of subjects were left, the 1,000 took 1.24–1.36 s against 1.10–1.13 s
 * alone. So the calling thread first runs for a quarter of a second, past its own warm-up, and
 * workers start only when the rest would take it over two more seconds.
 */
export function workersWorthIt(ranMs: number, leftMs: number): boolean {
  return ranMs >= WARM_UP_MS && leftMs > WORKERS_WORTH_MS;
}
/** The median of the last three rates (of fewer while there are fewer). */
export function recentRate(rates: readonly number[]): number {
  const last = rates.slice(-3).sort((a, b) => a - b);
  return last[Math.floor((last.length - 1) / 2)];
}

/** Chunks after which the calling thread runs the band code over a little of its grid (warmBands). */
const BAND_WARM_UPS = 3;
const WARM_UP_MS = 250;
const WORKERS_WORTH_MS = 2000;

/** Runs `range` (default: every subject) on up to `threads` threads; the batches in subject order, and the bands when asked. */
export async function runThreads(
  scenario: unknown,
  overrides: PopulationOverrides,
  subjects: number,
  options: ThreadOptions,
): Promise<Outcome<Batch[]> & { cancelled?: boolean; computed?: ComputedBands; threadsUsed?: number }> {
  const range = options.range ?? { first: 0, count: subjects };
  const threads = Math.max(1, options.threads);
  const chunks = chunkRanges(range, threads);
  const sharedGrids = options.bands === true && options.plan !== undefined;
  const chunkCount = chunks.length / 2;
  const shared = new SharedArrayBuffer(4);
  const counter = new Int32Array(shared);
  const inMain = options.plan !== undefined;
  const workerCount = Math.min(inMain ? threads - 1 : threads, chunkCount);
  const batches: Batch[] = [];
  let done = 0;
  let failure: Problem[] | null = null;
  const report = () => options.onProgress?.(done, range.count);
  const take = (batch: Batch) => {
    batches.push(batch);
    done += batch.count;
    report();
  };
  type PopulationWorker = ReturnType<typeof startWorker>;
  const workers: PopulationWorker[] = [];
  const runs: Promise<void>[] = [];
  const stopAll = () => workers.forEach((w) => void w.terminate());
  /** Who waits for each worker's share of the bands. */
  const bandWaiters = new Map<PopulationWorker, (r: BandRange | null) => void>();
  const finishedWorkers = new Set<PopulationWorker>();
  const startWorkers = () => {
    for (let k = 0; k < workerCount; k++) {
      const w = startWorker(options.worker, options.heapMb ? { resourceLimits: { maxOldGenerationSizeMb: options.heapMb } } : {});
      workers.push(w);
      runs.push(workerRun(w));
    }
  };
  const workerRun = (w: PopulationWorker) =>
      new Promise<void>((resolve) => {
        let settled = false;
        const settle = (problems: Problem[] | null) => {
          if (settled) return;
          settled = true;
          if (problems) {
            failure ??= problems;
            // One failure ends the population: no other chunk is started.
            Atomics.store(counter, 0, chunkCount);
          }
          resolve();
        };
        w.on('message', (m: BatchMessage) => {
          if (m.kind === 'ready') w.postMessage({ kind: 'chunks', scenario, overrides, chunks, counter: shared, sharedGrids } satisfies ThreadRequest);
          else if (m.kind === 'batch') take(m.batch);
          else if (m.kind === 'finished') {
            finishedWorkers.add(w);
            settle(null);
          } else if (m.kind === 'bands') bandWaiters.get(w)?.(m);
          else if (m.kind === 'problems') {
            bandWaiters.get(w)?.(null);
            settle(m.problems);
          }
        });
        const gone = (message: string) => {
          bandWaiters.get(w)?.(null);
          settle([{ path: 'population', message }]);
        };
        w.on('error', (e) => gone(`a population thread failed: ${e.message}`));
        w.on('exit', () => gone(options.signal?.aborted ? 'cancelled' : 'a population thread stopped unexpectedly'));
      });
  // Without the calling thread, the workers are all there is: started at once. With it, they
  // start only when the work left is worth what a thread costs to start (see workersWorthIt).
  if (!inMain || options.workersAtOnce) startWorkers();
  const onAbort = () => {
    Atomics.store(counter, 0, chunkCount);
    stopAll();
  };
  options.signal?.addEventListener('abort', onAbort, { once: true });
  try {
    const local: Local | null = options.plan ? await import('./population-local.ts') : null;
    if (options.plan && local) {
      // The calling thread takes chunks too, letting the threads' messages in between chunks.
      const began = performance.now();
      let warmUps = 0;
      // The last three chunks' rates, ms per subject: their median ignores one chunk slowed by a
      // busy moment of the host (the last chunk alone made a 0.8 s population look like 2 s of
      // work and started workers costing 0.4 s), yet follows subjects that grow slower as they go.
      const rates: number[] = [];
      for (let c = claimChunk(counter); c < chunkCount; c = claimChunk(counter)) {
        const chunkBegan = performance.now();
        const batch = local.runBatch(options.plan, chunks[2 * c], chunks[2 * c + 1], undefined, options.bands === true);
        if (workers.length === 0 && workerCount > 0) {
          const now = performance.now();
          const left = range.count - done - (batch.ok ? batch.value.count : 0);
          rates.push((now - chunkBegan) / chunks[2 * c + 1]);
          if (workersWorthIt(now - began, recentRate(rates) * left)) startWorkers();
        }
        if (!batch.ok) {
          failure ??= batch.problems;
          Atomics.store(counter, 0, chunkCount);
          break;
        }
        take(batch.value);
        // The band code compiled on the first chunks, while the subjects run (population-local.ts warmBands).
        if (options.bands === true && warmUps < BAND_WARM_UPS) {
          local.warmBands(options.plan, batch.value);
          warmUps++;
        }
        await new Promise<void>((resolve) => setImmediate(resolve));
        if (options.signal?.aborted) break;
      }
    }
    await Promise.all(runs);
    if (options.signal?.aborted) return { ok: false, problems: [{ path: 'population', message: 'cancelled' }], cancelled: true };
    if (failure) return { ok: false, problems: failure };
    batches.sort((a, b) => a.first - b.first);
    const threadsUsed = workers.length + (inMain ? 1 : 0);
    if (!options.bands || !options.plan || !local) return { ok: true, value: batches, threadsUsed };
    const computed = await bandsOnThreads(local, options.plan, batches, workers.filter((w) => finishedWorkers.has(w)), bandWaiters, options.signal);
    if (options.signal?.aborted || computed === null) return { ok: false, problems: [{ path: 'population', message: 'cancelled' }], cancelled: true };
    return { ok: true, value: batches, computed, threadsUsed };
  } finally {
    options.signal?.removeEventListener('abort', onAbort);
    stopAll();
  }
}

/**
 * The bands of finished batches, their output times split evenly between this thread and the
 * workers (which read the grids where they lie when those are shared). A worker that fails
 * leaves its share to this thread: the numbers are the same whoever finds them. Cancelled (the
 * workers terminated): null at once, rather than this thread finding every share left.
 */
async function bandsOnThreads(
  local: Local,
  plan: PopulationPlan,
  batches: Batch[],
  workers: ReturnType<typeof startWorker>[],
  waiters: Map<ReturnType<typeof startWorker>, (r: BandRange | null) => void>,
  signal: AbortSignal | undefined,
): Promise<ComputedBands | null> {
  const T = plan.template.outputTimes.length;
  const parts: GridPart[] = batches.map((b) => ({ first: b.first, count: b.count, grid: b.grid }));
  const shares = Math.min(T, workers.length + 1);
  const edge = (k: number) => Math.floor((T * k) / shares);
  const asked = workers.slice(0, shares - 1).map(
    (w, k) =>
      new Promise<BandRange | null>((resolve) => {
        const from = edge(k + 1);
        const to = edge(k + 2);
        waiters.set(w, (r) => {
          waiters.delete(w);
          resolve(r ?? (signal?.aborted ? null : local.bandRange(plan, parts, from, to)));
        });
        w.postMessage({ kind: 'bands', parts, from, to } satisfies ThreadRequest);
      }),
  );
  const own = local.bandRange(plan, parts, 0, edge(1));
  const others = await Promise.all(asked);
  const found = others.filter((r): r is BandRange => r !== null);
  if (signal?.aborted || found.length < others.length) return null;
  const ranges = [own, ...found];
  return {
    bands: local.joinBandRanges(plan, ranges),
    observationBands: plan.residual ? local.joinBandRanges(plan, ranges.map((r) => ({ from: r.from, to: r.to, values: r.observations as Float64Array }))) : null,
  };
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
