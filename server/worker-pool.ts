/**
 * A small pool of worker threads that run simulations off the request thread, each job
 * under a time budget and a memory ceiling: a job over either has its worker terminated
 * and replaced, and answers with a plain error, so one heavy request never stalls the
 * others for long nor takes the server's memory with it.
 */
import { getPriority, setPriority } from 'node:os';
import { Worker, type WorkerOptions } from 'node:worker_threads';
import type { JobReply, JobRequest } from './jobs.ts';

/**
 * The module a worker thread runs. 'built': a JavaScript file of the build (dist/server/),
 * run by plain node. 'source': a TypeScript module, run through tsx's loader, which
 * worker-entry.mjs registers in the thread (worker threads do not inherit it) before
 * importing the module; that compiles the engine at every start, seconds on a busy
 * machine. Whoever starts a worker says which: nothing here looks at what lies in dist/,
 * so a missing or stale build never reaches the tests, which run the sources.
 */
export type WorkerModule = { kind: 'built'; url: URL } | { kind: 'source'; url: URL };

const sourceEntry = new URL('./worker-entry.mjs', import.meta.url);

/** Starts a worker thread running `module`; the options are node's own. */
export function startWorker(module: WorkerModule, options: WorkerOptions = {}): Worker {
  if (module.kind === 'built') return new Worker(module.url, options);
  const data: unknown = options.workerData;
  const workerData = typeof data === 'object' && data !== null ? { ...data, module: module.url.href } : { module: module.url.href };
  return new Worker(sourceEntry, { ...options, workerData });
}

/** The simulation worker's TypeScript source: the pool's default (tests, `tsx server/main.ts`). */
export const simulationWorkerSource: WorkerModule = { kind: 'source', url: new URL('./simulation-worker.ts', import.meta.url) };

export interface PoolOptions {
  size: number;
  /** Wall-clock budget of one job, in milliseconds. */
  timeBudgetMs: number;
  /** Jobs allowed to wait for a worker; more are refused with 503. */
  maxQueue: number;
  /** JavaScript heap of one worker (V8's old generation), in MB; a worker past it dies and is replaced. */
  workerHeapMb?: number;
  /**
   * Resident memory of the whole process (the HTTP thread and every worker), in MB. Typed
   * arrays (the solvers' dense output) live outside the heap limit above, so the pool
   * also samples the process's RSS while jobs run and, past this, stops the job that has
   * run longest (a light job lasts milliseconds; the runaway is the long one).
   */
  memoryCeilingMb?: number;
  /**
   * A job that has run this long (ms) has its worker thread's scheduling priority lowered
   * (nice 10) until it ends, so that short jobs and the HTTP thread get the CPU first
   * while long ones run. Linux only (other systems keep every thread equal).
   */
  longJobMs?: number;
  /**
   * The module each worker runs: the built dist/server/simulation-worker.js when the built
   * server starts the pool (main.ts), else the TypeScript source through tsx.
   */
  worker?: WorkerModule;
}

export const defaultPoolMemory = { workerHeapMb: 1024, memoryCeilingMb: 3072 } as const;
const defaultLongJobMs = 1000;
/** How much a long job's thread is lowered: niceness added to its own (0 is normal, 19 the lowest). */
const longJobNice = 10;
/** How often the process's resident memory is sampled while a job runs. */
const memorySampleMs = 100;

type Reply = Omit<JobReply, 'id'>;

interface Pending {
  job: JobRequest;
  resolve: (reply: Reply) => void;
}

interface Slot {
  worker: Worker;
  /** Loading the engine takes a moment; the time budget starts only once the worker is ready. */
  ready: boolean;
  current: Pending | null;
  timer: NodeJS.Timeout | null;
  /** When the current job was posted (performance.now()). */
  startedAt: number;
  /** The worker thread's kernel id (Linux), reported when it is ready; null where unknown. */
  tid: number | null;
  /** Fires when the current job becomes a long one. */
  longTimer: NodeJS.Timeout | null;
  /** The thread runs at lowered priority. */
  lowered: boolean;
  /** Its niceness before it was lowered (the process's own, which may already be raised by `nice`). */
  basePriority: number;
}

function errorReply(status: number, message: string, path = ''): Reply {
  return { status, contentType: 'application/json', body: JSON.stringify({ problems: [{ path, message }] }) };
}

export class SimulationPool {
  private readonly slots: Slot[] = [];
  private readonly queue: Pending[] = [];
  private nextId = 1;
  private closed = false;
  /** Workers that died before they were ready, in a row; past a few the pool stops respawning. */
  private startFailures = 0;
  private broken = false;
  private memoryWatch: NodeJS.Timeout | null = null;
  /** After a job is stopped for memory, the ceiling is not judged again until its worker's memory is released. */
  private memoryQuietUntil = 0;
  private readonly workerHeapMb: number;
  private readonly memoryCeilingMb: number;

  constructor(readonly options: PoolOptions) {
    this.workerHeapMb = options.workerHeapMb ?? defaultPoolMemory.workerHeapMb;
    this.memoryCeilingMb = options.memoryCeilingMb ?? defaultPoolMemory.memoryCeilingMb;
    for (let i = 0; i < options.size; i++) this.slots.push(this.spawn());
  }

  /** The memory limits in force, for /api/limits. */
  get memoryLimits(): { workerHeapMb: number; memoryCeilingMb: number } {
    return { workerHeapMb: this.workerHeapMb, memoryCeilingMb: this.memoryCeilingMb };
  }

  run(job: Omit<JobRequest, 'id'>): Promise<Reply> {
    if (this.closed) return Promise.resolve(errorReply(503, 'the server is shutting down'));
    if (this.broken) return Promise.resolve(errorReply(500, 'the simulation workers cannot start; see the server log'));
    if (this.queue.length >= this.options.maxQueue) {
      return Promise.resolve(errorReply(503, 'the server is busy with other simulations; try again shortly'));
    }
    return new Promise((resolve) => {
      this.queue.push({ job: { ...job, id: this.nextId++ }, resolve });
      this.dispatch();
    });
  }

  async close(): Promise<void> {
    this.closed = true;
    this.watchMemory();
    for (const p of this.queue.splice(0)) p.resolve(errorReply(503, 'the server is shutting down'));
    await Promise.all(
      this.slots.map((s) => {
        if (s.timer) clearTimeout(s.timer);
        if (s.longTimer) clearTimeout(s.longTimer);
        s.current?.resolve(errorReply(503, 'the server is shutting down'));
        s.current = null;
        return s.worker.terminate();
      }),
    );
  }

  private spawn(): Slot {
    const worker = startWorker(this.options.worker ?? simulationWorkerSource, { resourceLimits: { maxOldGenerationSizeMb: this.workerHeapMb } });
    const slot: Slot = { worker, ready: false, current: null, timer: null, startedAt: 0, tid: null, longTimer: null, lowered: false, basePriority: 0 };
    // Nothing thrown here may leave an event handler: it would end the process.
    worker.on('message', (reply: JobReply | { ready: true; tid: number | null }) => {
      guarded(() => {
        if ('ready' in reply) {
          slot.ready = true;
          slot.tid = reply.tid;
          this.startFailures = 0;
          this.dispatch();
          return;
        }
        const pending = slot.current;
        if (!pending || pending.job.id !== reply.id) return;
        this.finish(slot, { status: reply.status, contentType: reply.contentType, body: reply.body });
      });
    });
    worker.on('error', (e: Error & { code?: string }) => {
      guarded(() => {
        if (e.code === 'ERR_WORKER_OUT_OF_MEMORY') {
          console.error(`simulation worker stopped: its job needed more than ${this.workerHeapMb} MB of heap`);
          this.replace(slot, errorReply(422, `the computation needed more memory than this server allows one simulation (${this.workerHeapMb} MB) and was stopped; ${remedy}`));
          return;
        }
        console.error(`simulation worker failed: ${e.message}`);
        this.replace(slot, errorReply(500, `internal error in the simulation worker: ${e.message}`));
      });
    });
    worker.on('exit', () => {
      guarded(() => {
        if (!this.closed && this.slots.includes(slot)) this.replace(slot, errorReply(500, 'the simulation worker stopped unexpectedly'));
      });
    });
    worker.unref();
    return slot;
  }

  private finish(slot: Slot, reply: Reply): void {
    if (slot.timer) clearTimeout(slot.timer);
    slot.timer = null;
    this.endLongJob(slot);
    const pending = slot.current;
    slot.current = null;
    pending?.resolve(reply);
    this.dispatch();
  }

  /** Terminates a slot's worker (over budget or broken) and puts a fresh one in its place. */
  private replace(slot: Slot, reply: Reply): void {
    const index = this.slots.indexOf(slot);
    if (index < 0) return;
    if (slot.timer) clearTimeout(slot.timer);
    if (slot.longTimer) clearTimeout(slot.longTimer);
    const pending = slot.current;
    slot.current = null;
    this.slots.splice(index, 1);
    void slot.worker.terminate();
    if (!slot.ready && ++this.startFailures >= 3) {
      // A worker that cannot even load would be replaced for ever: give up and answer the queue.
      this.broken = true;
      for (const p of this.queue.splice(0)) p.resolve(errorReply(500, 'the simulation workers cannot start; see the server log'));
    }
    if (!this.closed && !this.broken) this.slots.push(this.spawn());
    pending?.resolve(reply);
    this.dispatch();
  }

  /**
   * Hands queued jobs to free, ready workers. A job is posted before its slot is marked
   * busy: posting clones the job, and a clone that fails (a structure nested past the
   * stack, say) must answer that job alone and leave the slot free for the next.
   */
  private dispatch(): void {
    for (const slot of this.slots) {
      while (slot.ready && !slot.current && this.queue.length > 0) {
        const pending = this.queue.shift() as Pending;
        try {
          slot.worker.postMessage(pending.job);
        } catch (e) {
          const why = e instanceof Error ? e.message : String(e);
          pending.resolve(errorReply(400, `the request could not be handed to a simulation worker (${why}); send a plain scenario object`));
          continue;
        }
        slot.current = pending;
        slot.startedAt = performance.now();
        slot.timer = setTimeout(() => {
          const seconds = this.options.timeBudgetMs / 1000;
          guarded(() =>
            this.replace(
              slot,
              errorReply(422, `the computation took longer than this server's budget of ${seconds} s and was stopped; shorten the span, coarsen the output or loosen the tolerance, or use the command line`, 'solver'),
            ),
          );
        }, this.options.timeBudgetMs);
        if (slot.tid !== null && !slot.lowered) {
          slot.longTimer = setTimeout(() => guarded(() => this.lowerPriority(slot)), this.options.longJobMs ?? defaultLongJobMs);
        }
      }
    }
    this.watchMemory();
  }

  private lowerPriority(slot: Slot): void {
    slot.longTimer = null;
    if (slot.tid === null || !slot.current) return;
    try {
      // Relative to the thread's own niceness: a server started under `nice` lowers its long jobs below itself.
      const base = getPriority(slot.tid);
      if (base >= 19) return;
      setPriority(slot.tid, Math.min(19, base + longJobNice));
      slot.basePriority = base;
      slot.lowered = true;
    } catch {
      slot.tid = null; // not allowed here: leave every thread as it is
    }
  }

  /**
   * Back to normal priority when a long job ends. Going back up needs a permission an
   * ordinary user may lack (RLIMIT_NICE); the worker then stays lowered, which costs only
   * against other programs, since every worker that has run a long job is lowered alike.
   */
  private endLongJob(slot: Slot): void {
    if (slot.longTimer) clearTimeout(slot.longTimer);
    slot.longTimer = null;
    if (!slot.lowered || slot.tid === null) return;
    try {
      setPriority(slot.tid, slot.basePriority);
      slot.lowered = false;
    } catch {
      slot.tid = null;
    }
  }

  /** Samples the process's resident memory while any job runs, and only then. */
  private watchMemory(): void {
    const busy = !this.closed && this.slots.some((s) => s.current !== null);
    if (busy && !this.memoryWatch) {
      this.memoryWatch = setInterval(() => guarded(() => this.checkMemory()), memorySampleMs);
      this.memoryWatch.unref();
    } else if (!busy && this.memoryWatch) {
      clearInterval(this.memoryWatch);
      this.memoryWatch = null;
    }
  }

  private checkMemory(): void {
    if (performance.now() < this.memoryQuietUntil) return;
    const rssMb = process.memoryUsage.rss() / 2 ** 20;
    if (rssMb <= this.memoryCeilingMb) return;
    let oldest: Slot | null = null;
    for (const s of this.slots) if (s.current && (!oldest || s.startedAt < oldest.startedAt)) oldest = s;
    if (!oldest) return;
    console.error(`server memory at ${Math.round(rssMb)} MB, over its ceiling of ${this.memoryCeilingMb} MB: stopping the longest-running simulation`);
    // Terminating frees the worker's memory within a moment; wait for that before judging again.
    this.memoryQuietUntil = performance.now() + 1000;
    this.replace(oldest, errorReply(422, `the computation took the server past its memory ceiling (${this.memoryCeilingMb} MB) and was stopped; ${remedy}`));
  }
}

const remedy = 'shorten the span, coarsen the output or the solver step, use fewer doses, or use the command line';

/** Runs an event handler's body; an error is logged, never thrown out of the handler. */
function guarded(body: () => void): void {
  try {
    body();
  } catch (e) {
    console.error(`simulation pool: ${e instanceof Error ? e.message : String(e)}`);
  }
}
