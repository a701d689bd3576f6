/**
 * Population proposals across threads, called synchronously: the command line's `propose` and
 * the API's proposal job are synchronous functions (runCli, runLevelsJob), so this thread blocks
 * on a shared counter (Atomics.wait) and reads the threads' answers from message ports by
 * receiveMessageOnPort, never through its event loop.
 *
 * The subjects are cut into chunks (chunkRanges); this thread and every worker
 * (proposals-worker.ts) take the next chunk from one shared counter until none is left, so a
 * thread still loading the engine takes fewer. Each chunk is every candidate on its subjects
 * (runProposalChunk): subject i's numbers depend only on (seed, i), so the result is the same
 * for any number of threads, and the same as proposeForPopulation's in one thread.
 *
 * The typical subject's loading doses are chosen here once and told to the workers. Asked to
 * (workersAtOnce false), this thread starts alone and starts the workers only when the work left
 * is worth what they cost to start, as the population command does.
 */
import { availableParallelism } from 'node:os';
import { MessageChannel, receiveMessageOnPort, type MessagePort, type Worker } from 'node:worker_threads';
import { chunkRanges } from '../models/population/ranges.ts';
import { prepareProposals, runProposalChunk, summariseProposals, type PopulationProposalLimits, type PreparedProposals, type ProposalChunk } from '../models/regimen/population-proposals.ts';
import { proposeByBasis } from '../models/regimen/propose-basis.ts';
import type { ProposeResult } from '../models/regimen/propose.ts';
import { readPropose } from '../models/regimen/settings.ts';
import { normaliseScenario, parseScenario } from '../models/scenario/normalize.ts';
import type { Outcome, Problem } from '../models/scenario/problems.ts';
import { recentRate, workersWorthIt } from './population-threads.ts';
import { startWorker, type WorkerModule } from './worker-pool.ts';

/** What a proposals worker is started with. */
export interface ProposalWorkerData {
  input: unknown;
  limits: PopulationProposalLimits;
  /** The typical subject's loading dose of each candidate (model amount unit), or null. */
  loadings: (number | null)[];
  /** [first, count] pairs in subject order. */
  chunks: Int32Array;
  /** Int32 [next chunk to take, messages posted]. */
  state: SharedArrayBuffer;
  port: MessagePort;
}

/** What a proposals worker posts on its port. */
export type ProposalWorkerMessage = { kind: 'chunk'; chunk: ProposalChunk } | { kind: 'problems'; problems: Problem[] } | { kind: 'finished' };

/**
 * Silence from every worker, while chunks are outstanding, after which this thread computes them
 * itself: only a thread that died unheard is that quiet for long (a chunk is at most 64 subjects);
 * a slow one merely has its work done twice, with the same numbers. This is the command line's,
 * which has no time budget; a caller with one passes stallForBudget of what is left of it.
 */
export const STALL_MS = 60_000;

/**
 * The silence to wait for, out of `remainingMs` of a time budget: a third of it, so that the
 * outstanding chunks can still be done here before the budget stops the job (the chunks a lost
 * thread held are at most its share, and this thread had been computing beside it).
 */
export function stallForBudget(remainingMs: number): number {
  return Math.max(1, Math.floor(remainingMs / 3));
}

/** Below this many subject × regimen runs one thread is quicker than starting others (a worker loads the engine in about a second). */
export const THREADS_FROM_RUNS = 2_000;

export interface ProposalThreadOptions {
  /** Threads that compute, this one included (default: the machine's cores). */
  threads?: number;
  /** The worker to start (default: proposalsWorkerModule()). */
  worker?: WorkerModule;
  /** Fewer runs than this stay in this thread (default THREADS_FROM_RUNS). */
  minRuns?: number;
  /** False: this thread only waits, the workers compute every chunk (tests: the workers' numbers are then all there is). */
  callerComputes?: boolean;
  /** Silence after which this thread does the outstanding chunks itself (default STALL_MS; a budgeted caller: stallForBudget). */
  stallMs?: number;
  /** JavaScript heap of each worker (V8's old generation), MB: the limit the caller itself runs under; none when absent. */
  heapMb?: number;
  /**
   * Start the workers at once (default; a thread count the user asked for). False: this thread
   * starts alone and starts them only when the work left is worth it (population-threads.ts
   * workersWorthIt: after a quarter of a second, when the rest would take it over two more at
   * the median rate of the last three chunks).
   */
  workersAtOnce?: boolean;
  /** The clock the silence is measured on, ms (default Date.now; tests count its readings). */
  now?: () => number;
}

/** How runChunksOnThreads starts and watches its workers. */
interface ThreadPlan {
  threads: number;
  module: WorkerModule;
  callerComputes: boolean;
  stallMs: number;
  heapMb: number | undefined;
  workersAtOnce: boolean;
  now: () => number;
}

// Read through a variable on purpose: the server build rewrites the literal `import.meta` URL
// of a non-entry module to its source file's, but here the file's own place is wanted — in
// the build, a chunk beside the built entries and so beside the built proposals worker.
const here = import.meta;

/** The built worker beside the built command line and server; the TypeScript source otherwise (tests, tsx). */
export function proposalsWorkerModule(): WorkerModule {
  return here.url.endsWith('.js') ? { kind: 'built', url: new URL('./proposals-worker.js', here.url) } : { kind: 'source', url: new URL('./proposals-worker.ts', here.url) };
}

/** The sendable form of the typical loading doses. */
function loadingAmounts(p: PreparedProposals): (number | null)[] {
  return (p.loadings ?? p.specs.map(() => null)).map((l) => l?.amount ?? null);
}

/** Typical or population proposals, a population's subjects across `threads` threads when it is large enough. */
export function proposeOnThreads(input: unknown, limits: PopulationProposalLimits, options: ProposalThreadOptions = {}): Outcome<ProposeResult> {
  const parsed = parseScenario(input);
  if (!parsed.ok) return parsed;
  if (parsed.value.propose?.basis !== 'population') return proposeByBasis(input, limits);
  const model = normaliseScenario(parsed.value);
  if (!model.ok) return model;
  const settings = readPropose(parsed.value, model.value);
  if (!settings.ok) return settings;
  const prepared = prepareProposals(parsed.value, model.value, settings.value, limits);
  if (!prepared.ok) return prepared;
  const p = prepared.value;
  const N = p.plan.subjects;
  const threads = Math.max(1, Math.min(options.threads ?? availableParallelism(), N));
  if (threads === 1 || N * p.specs.length < (options.minRuns ?? THREADS_FROM_RUNS)) {
    const chunk = runProposalChunk(p, 0, N);
    return chunk.ok ? { ok: true, value: summariseProposals(p, [chunk.value]) } : chunk;
  }
  const plan: ThreadPlan = {
    threads,
    module: options.worker ?? proposalsWorkerModule(),
    callerComputes: options.callerComputes ?? true,
    stallMs: options.stallMs ?? STALL_MS,
    heapMb: options.heapMb,
    workersAtOnce: options.workersAtOnce ?? true,
    now: options.now ?? Date.now,
  };
  const chunks = runChunksOnThreads(p, input, limits, plan);
  return chunks.ok ? { ok: true, value: summariseProposals(p, chunks.value) } : chunks;
}

/** Every chunk of the subjects, by this thread and threads − 1 workers, or the first problem met. */
function runChunksOnThreads(p: PreparedProposals, input: unknown, limits: PopulationProposalLimits, plan: ThreadPlan): Outcome<ProposalChunk[]> {
  const ranges = chunkRanges({ first: 0, count: p.plan.subjects }, plan.threads);
  const chunkCount = ranges.length / 2;
  const shared = new SharedArrayBuffer(2 * Int32Array.BYTES_PER_ELEMENT);
  const state = new Int32Array(shared);
  const workers: { worker: Worker; port: MessagePort }[] = [];
  const loadings = loadingAmounts(p);
  const resourceLimits = plan.heapMb ? { resourceLimits: { maxOldGenerationSizeMb: plan.heapMb } } : {};
  let started = false;
  const startWorkers = () => {
    started = true;
    for (let w = 0; w < plan.threads - 1; w++) {
      const channel = new MessageChannel();
      const data: ProposalWorkerData = { input, limits, loadings, chunks: ranges, state: shared, port: channel.port2 };
      try {
        workers.push({ worker: startWorker(plan.module, { workerData: data, transferList: [channel.port2], ...resourceLimits }), port: channel.port1 });
      } catch {
        // A thread that cannot start leaves its chunks to the others.
        channel.port1.close();
      }
    }
  };
  // A thread that only waits needs its workers now; otherwise they may wait for workersWorthIt.
  if (plan.workersAtOnce || !plan.callerComputes) startWorkers();
  // With no worker started, this thread computes every chunk whatever it was told.
  const computes = plan.callerComputes || workers.length === 0;
  const done: ProposalChunk[] = [];
  let failure: Problem[] | null = null;
  const drain = () => {
    for (const { port } of workers) {
      for (let m = receiveMessageOnPort(port); m; m = receiveMessageOnPort(port)) {
        const message = m.message as ProposalWorkerMessage;
        if (message.kind === 'chunk') done.push(message.chunk);
        else if (message.kind === 'problems') failure ??= message.problems;
      }
    }
  };
  try {
    const began = performance.now();
    // Chunk rates (ms per subject), judged by their recent median as a population's are (recentRate).
    const rates: number[] = [];
    for (let c = computes ? Atomics.add(state, 0, 1) : chunkCount; c < chunkCount; c = Atomics.add(state, 0, 1)) {
      const chunkBegan = performance.now();
      const chunk = runProposalChunk(p, ranges[2 * c], ranges[2 * c + 1]);
      if (!chunk.ok) {
        failure ??= chunk.problems;
        break;
      }
      done.push(chunk.value);
      if (!started) {
        // The subjects not yet taken, at the median rate of the last three chunks (the next chunk index is the count handed out).
        const now = performance.now();
        const taken = Math.min(Atomics.load(state, 0), chunkCount);
        const left = taken < chunkCount ? p.plan.subjects - ranges[2 * taken] : 0;
        rates.push((now - chunkBegan) / ranges[2 * c + 1]);
        if (workersWorthIt(now - began, recentRate(rates) * left)) startWorkers();
      }
    }
    // Then the workers' chunks: woken by each message they post (or every 100 ms to look again).
    let heard = plan.now();
    for (;;) {
      const posted = Atomics.load(state, 1);
      drain();
      if (failure || done.length === chunkCount) break;
      if (Atomics.wait(state, 1, posted, 100) !== 'timed-out') heard = plan.now();
      else if (plan.now() - heard > plan.stallMs) {
        // A thread that died without a word (out of memory, say) is never heard from: its chunks are done here.
        Atomics.store(state, 0, chunkCount);
        drain();
        const have = new Set(done.map((c) => c.first));
        for (let c = 0; c < chunkCount && !failure; c++) {
          if (have.has(ranges[2 * c])) continue;
          const chunk = runProposalChunk(p, ranges[2 * c], ranges[2 * c + 1]);
          if (chunk.ok) done.push(chunk.value);
          else failure = chunk.problems;
        }
        break;
      }
    }
  } finally {
    // No chunk is taken after this; a worker still loading finds none and ends.
    Atomics.store(state, 0, chunkCount);
    for (const { worker, port } of workers) {
      port.close();
      void worker.terminate();
    }
  }
  if (failure) return { ok: false, problems: failure };
  return { ok: true, value: done.sort((a, b) => a.first - b.first) };
}
