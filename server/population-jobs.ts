/**
 * Population runs behind the HTTP API: a POST is checked (the plan, then this server's
 * limits) and started on worker threads; the run is then a job the page polls for progress,
 * fetches when done, or cancels. One population runs at a time (it takes every core it is
 * given); finished ones are kept a short while, then forgotten.
 */
import { randomUUID } from 'node:crypto';
import type { PopulationPlan } from '../models/population/population.ts';
import type { Problem } from '../models/scenario/problems.ts';
import type { WorkerModule } from './worker-pool.ts';

/**
 * The engine and the threads are loaded at the first population request, not at the
 * server's start: the HTTP thread otherwise only forwards bytes, and most runs are single.
 */
type Loaded = { engine: typeof import('../models/population/population.ts'); threads: typeof import('./population-threads.ts') };
let loading: Promise<Loaded> | null = null;
function load(): Promise<Loaded> {
  loading ??= Promise.all([import('../models/population/population.ts'), import('./population-threads.ts')]).then(([engine, threads]) => ({ engine, threads }));
  return loading;
}

export interface PopulationLimits {
  /** Subjects of one run. */
  maxSubjects: number;
  /** Subjects × output times × compartments with a volume: the concentrations held for the bands. */
  maxNumbers: number;
  /** Regimens of the grid × subjects: every regimen is run on every subject. */
  maxRegimenRuns: number;
  /** Wall-clock budget of one run, ms; past it the run is stopped and reported as failed. */
  timeBudgetMs: number;
  /** How long a finished run's answer is kept, ms. */
  keepMs: number;
  /** Finished runs kept at most (the oldest goes first). */
  keepResults: number;
}

export const defaultPopulationLimits: PopulationLimits = {
  maxSubjects: 5000,
  maxNumbers: 20_000_000,
  maxRegimenRuns: 50_000,
  timeBudgetMs: 120_000,
  keepMs: 10 * 60_000,
  keepResults: 4,
};

export interface PopulationJobOptions {
  threads: number;
  /** The thread module; default: the TypeScript source (the built server passes the built one). */
  worker?: WorkerModule;
  limits: PopulationLimits;
  /** JavaScript heap of each thread, MB. */
  heapMb?: number;
}

/** What GET /api/population/:id answers (the result is kept as its JSON text). */
export type JobState =
  | { state: 'running'; done: number; total: number }
  | { state: 'done'; resultJson: string }
  | { state: 'failed'; problems: Problem[] }
  | { state: 'cancelled' };

interface Job {
  id: string;
  state: JobState;
  controller: AbortController;
  /** Settles when the threads have stopped, whatever the outcome. */
  finished: Promise<void>;
  timers: NodeJS.Timeout[];
}

export type StartAnswer = { status: 202; id: string } | { status: 400 | 503; problems: Problem[] };

const grouped = (n: number) => n.toLocaleString('en-US');

/** The request's own fields beside the scenario: `subjects` and `seed` override the scenario's population. */
function readRequest(body: unknown): { scenario: unknown; overrides: { subjects?: number; seed?: number } } | Problem[] {
  if (typeof body !== 'object' || body === null || Array.isArray(body)) {
    return [{ path: '', message: 'the request must be an object: { "scenario": { … }, "subjects"?: 200, "seed"?: 1 }' }];
  }
  const b = body as Record<string, unknown>;
  const problems: Problem[] = [];
  if (typeof b.scenario !== 'object' || b.scenario === null || Array.isArray(b.scenario)) {
    problems.push({ path: 'scenario', message: 'is required: the scenario object, with a `population` section' });
  }
  const known = new Set(['scenario', 'subjects', 'seed']);
  for (const key of Object.keys(b)) if (!known.has(key)) problems.push({ path: key, message: 'is not a field of a population request (scenario, subjects, seed)' });
  const overrides: { subjects?: number; seed?: number } = {};
  if (b.subjects !== undefined) {
    if (typeof b.subjects !== 'number' || !Number.isInteger(b.subjects) || b.subjects < 1) problems.push({ path: 'subjects', message: 'must be a whole number of at least 1' });
    else overrides.subjects = b.subjects;
  }
  if (b.seed !== undefined) {
    if (typeof b.seed !== 'number' || !Number.isSafeInteger(b.seed) || b.seed < 0) problems.push({ path: 'seed', message: 'must be a whole number from 0' });
    else overrides.seed = b.seed;
  }
  return problems.length > 0 ? problems : { scenario: b.scenario, overrides };
}

/**
 * This server's limits on a valid plan, each named at the field that changes it: the subjects at
 * the request's own `subjects` when it overrides the scenario's count (`overridden`), else at
 * population.subjects.
 */
export function limitProblems(plan: PopulationPlan, limits: PopulationLimits, overridden = false): Problem[] {
  const problems: Problem[] = [];
  const n = plan.subjects;
  if (n > limits.maxSubjects) {
    problems.push({ path: overridden ? 'subjects' : 'population.subjects', message: `${grouped(n)} subjects: this server runs at most ${grouped(limits.maxSubjects)} in one population (the command line runs more)` });
  }
  const times = plan.template.outputTimes.length;
  const banded = plan.layout.banded.length;
  const numbers = n * times * banded;
  if (numbers > limits.maxNumbers) {
    problems.push({
      path: 'output.step',
      message: `${grouped(n)} subjects × ${grouped(times)} output times × ${banded} compartment${banded === 1 ? '' : 's'} with a volume = ${grouped(numbers)} concentrations; this server holds at most ${grouped(limits.maxNumbers)}: coarsen the output step, shorten the span or run fewer subjects`,
    });
  }
  const runs = plan.regimens.length * n;
  if (runs > limits.maxRegimenRuns) {
    problems.push({
      path: 'population.regimens',
      message: `${plan.regimens.length} regimens × ${grouped(n)} subjects = ${grouped(runs)} runs; this server runs at most ${grouped(limits.maxRegimenRuns)}: list fewer amounts, intervals or durations, or run fewer subjects`,
    });
  }
  return problems;
}

export class PopulationJobs {
  private readonly jobs = new Map<string, Job>();
  /** The job holding the threads; null when none runs. */
  private running: Job | null = null;
  /** Finished jobs' ids, oldest first. */
  private finishedOrder: string[] = [];

  constructor(readonly options: PopulationJobOptions) {}

  /** Checks the request and starts the run; a second run while one holds the threads is refused. */
  async start(body: unknown): Promise<StartAnswer> {
    const request = readRequest(body);
    if (Array.isArray(request)) return { status: 400, problems: request };
    const { engine, threads } = await load();
    const plan = engine.planPopulation(request.scenario, request.overrides);
    if (!plan.ok) return { status: 400, problems: plan.problems };
    const over = limitProblems(plan.value, this.options.limits, request.overrides.subjects !== undefined);
    if (over.length > 0) return { status: 400, problems: over };
    // A cancelled run lets go of its threads within moments: wait for that rather than refuse.
    if (this.running && this.running.controller.signal.aborted) await this.running.finished;
    if (this.running) {
      const s = this.running.state;
      const progress = s.state === 'running' ? ` (${grouped(s.done)} of ${grouped(s.total)} subjects done)` : '';
      return { status: 503, problems: [{ path: '', message: `another population is running on this server${progress}; only one runs at a time. Wait for it to finish or cancel it, then run again` }] };
    }
    return { status: 202, id: this.launch(request.scenario, request.overrides, plan.value, { engine, threads }) };
  }

  private launch(scenario: unknown, overrides: { subjects?: number; seed?: number }, plan: PopulationPlan, { engine, threads }: Loaded): string {
    const id = randomUUID();
    const controller = new AbortController();
    const job: Job = { id, state: { state: 'running', done: 0, total: plan.subjects }, controller, finished: Promise.resolve(), timers: [] };
    this.jobs.set(id, job);
    this.running = job;
    let overBudget = false;
    const budget = setTimeout(() => {
      overBudget = true;
      controller.abort();
    }, this.options.limits.timeBudgetMs);
    job.finished = threads
      .runThreads(scenario, overrides, plan.subjects, {
        threads: this.options.threads,
        worker: this.options.worker ?? threads.populationWorkerSource,
        signal: controller.signal,
        ...(this.options.heapMb ? { heapMb: this.options.heapMb } : {}),
        onProgress: (done, total) => {
          if (job.state.state === 'running') job.state = { state: 'running', done, total };
        },
      })
      .then((batches) => {
        const seconds = Math.round(this.options.limits.timeBudgetMs / 1000);
        const overBudgetState: JobState = { state: 'failed', problems: [{ path: 'population', message: `the population took longer than this server's budget of ${seconds} s and was stopped; run fewer subjects, fewer regimens or a coarser output step, or use the command line` }] };
        if (overBudget) return this.settle(job, overBudgetState);
        if (controller.signal.aborted || batches.cancelled) return this.settle(job, { state: 'cancelled' });
        if (!batches.ok) return this.settle(job, { state: 'failed', problems: batches.problems });
        // The percentiles of a large population take seconds: computed in a thread, not here.
        return threads.summariseInThread(scenario, overrides, batches.value, this.options.worker ?? threads.populationWorkerSource).then((summary) => {
          if (overBudget) return this.settle(job, overBudgetState);
          if (controller.signal.aborted) return this.settle(job, { state: 'cancelled' });
          this.settle(job, summary.ok ? { state: 'done', resultJson: summary.value } : { state: 'failed', problems: summary.problems });
        });
      })
      .catch((e: unknown) => {
        this.settle(job, { state: 'failed', problems: [{ path: 'population', message: `the population could not be completed: ${e instanceof Error ? e.message : String(e)}` }] });
      })
      .finally(() => clearTimeout(budget));
    return id;
  }

  /** A job's end: the threads are free, and the answer is kept for a while. */
  private settle(job: Job, state: JobState): void {
    // A cancel already said so; the threads' own ending does not change that.
    if (job.state.state === 'running') job.state = state;
    if (this.running === job) this.running = null;
    this.finishedOrder.push(job.id);
    const expiry = setTimeout(() => this.forget(job.id), this.options.limits.keepMs);
    expiry.unref();
    job.timers.push(expiry);
    while (this.finishedOrder.length > this.options.limits.keepResults) this.forget(this.finishedOrder[0]);
  }

  private forget(id: string): void {
    const job = this.jobs.get(id);
    if (job) job.timers.forEach((t) => clearTimeout(t));
    this.jobs.delete(id);
    this.finishedOrder = this.finishedOrder.filter((x) => x !== id);
  }

  /** The job's state, or null when no such job is kept. */
  state(id: string): JobState | null {
    return this.jobs.get(id)?.state ?? null;
  }

  /** Cancels a running job (its threads are terminated); a finished one is forgotten. The state it ends in, or null. */
  cancel(id: string): JobState | null {
    const job = this.jobs.get(id);
    if (!job) return null;
    if (job.state.state === 'running') {
      job.state = { state: 'cancelled' };
      job.controller.abort();
      return job.state;
    }
    const state = job.state;
    this.forget(id);
    return state;
  }

  /** Stops a running job and forgets every one (server shutdown, tests). */
  async close(): Promise<void> {
    const running = this.running;
    running?.controller.abort();
    if (running) await running.finished;
    for (const id of [...this.jobs.keys()]) this.forget(id);
  }
}

/** The JSON text of a job's state for GET, the result spliced in as kept. */
export function stateJson(state: JobState): string {
  if (state.state === 'done') return `{"state":"done","result":${state.resultJson}}`;
  return JSON.stringify(state);
}
