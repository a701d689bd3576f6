/**
 * A small pool of worker threads that run simulations off the request thread, each job
 * under a time budget: a job over budget has its worker terminated and replaced, and
 * answers with a plain error, so one heavy request never stalls the others for long.
 */
import { Worker } from 'node:worker_threads';
import type { JobReply, JobRequest } from './jobs.ts';

export interface PoolOptions {
  size: number;
  /** Wall-clock budget of one job, in milliseconds. */
  timeBudgetMs: number;
  /** Jobs allowed to wait for a worker; more are refused with 503. */
  maxQueue: number;
}

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
}

const entry = new URL('./worker-entry.mjs', import.meta.url);
const workerModule = new URL('./simulation-worker.ts', import.meta.url).href;

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

  constructor(readonly options: PoolOptions) {
    for (let i = 0; i < options.size; i++) this.slots.push(this.spawn());
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
    for (const p of this.queue.splice(0)) p.resolve(errorReply(503, 'the server is shutting down'));
    await Promise.all(
      this.slots.map((s) => {
        if (s.timer) clearTimeout(s.timer);
        s.current?.resolve(errorReply(503, 'the server is shutting down'));
        s.current = null;
        return s.worker.terminate();
      }),
    );
  }

  private spawn(): Slot {
    const worker = new Worker(entry, { workerData: { module: workerModule } });
    const slot: Slot = { worker, ready: false, current: null, timer: null };
    worker.on('message', (reply: JobReply | { ready: true }) => {
      if ('ready' in reply) {
        slot.ready = true;
        this.startFailures = 0;
        this.dispatch();
        return;
      }
      const pending = slot.current;
      if (!pending || pending.job.id !== reply.id) return;
      this.finish(slot, { status: reply.status, contentType: reply.contentType, body: reply.body });
    });
    worker.on('error', (e) => {
      console.error(`simulation worker failed: ${e.message}`);
      this.replace(slot, errorReply(500, `internal error in the simulation worker: ${e.message}`));
    });
    worker.on('exit', () => {
      if (!this.closed && this.slots.includes(slot)) this.replace(slot, errorReply(500, 'the simulation worker stopped unexpectedly'));
    });
    worker.unref();
    return slot;
  }

  private finish(slot: Slot, reply: Reply): void {
    if (slot.timer) clearTimeout(slot.timer);
    slot.timer = null;
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

  private dispatch(): void {
    for (const slot of this.slots) {
      if (!slot.ready || slot.current || this.queue.length === 0) continue;
      const pending = this.queue.shift() as Pending;
      slot.current = pending;
      slot.timer = setTimeout(() => {
        const seconds = this.options.timeBudgetMs / 1000;
        this.replace(
          slot,
          errorReply(422, `the computation took longer than this server's budget of ${seconds} s and was stopped; shorten the span, coarsen the output or loosen the tolerance, or use the command line`, 'solver'),
        );
      }, this.options.timeBudgetMs);
      slot.worker.postMessage(pending.job);
    }
  }
}
