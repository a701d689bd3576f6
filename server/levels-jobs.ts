/**
 * The API's computations on measured levels, run in a simulation worker and loaded there on
 * demand (simulation-worker.ts imports this file by import() at the first such job): NCA of the
 * scenario's observations, a fit of chosen quantities to them, and regimen proposals. Each
 * answers the status and JSON text: 400 with paths for input that is wrong (read first, with
 * the same readers the computations use), 422 when the computation itself fails.
 */
import { fitScenario } from '../models/fitting/fit.ts';
import { readFitPlan, type Objective } from '../models/fitting/settings.ts';
import { ncaOfModel } from '../models/levels/nca-scenario.ts';
import type { NcaRule } from '../models/levels/nca.ts';
import { checkPopulationProposals } from '../models/regimen/population-proposals.ts';
import { readPropose } from '../models/regimen/settings.ts';
import { buildModel, parseScenario } from '../models/scenario/normalize.ts';
import type { Problem } from '../models/scenario/problems.ts';
import { fitCaution } from './fit-cli.ts';
import type { JobReply, JobRequest } from './jobs.ts';
import { proposeOnThreads, stallForBudget, type ProposalThreadOptions } from './proposals-threads.ts';
import { populationProposalLimits } from './propose-cli.ts';

type Reply = Omit<JobReply, 'id'>;

const problems = (status: number, list: Problem[]): Reply => ({ status, contentType: 'application/json', body: JSON.stringify({ problems: list }) });
const megabytes = (bytes: number) => `${Math.round((bytes / 2 ** 20) * 10) / 10} MB`;

/** What a levels job knows of the pool worker it runs in; nothing known means one thread for proposals. */
export interface LevelsJobContext {
  /** Workers in the pool. */
  poolSize?: number;
  /** The job's wall-clock budget, ms, counted from when this job began. */
  timeBudgetMs?: number;
  /** The pool's heap limit of one worker, MB: nested threads get the same. */
  workerHeapMb?: number;
  /** When the job began (Date.now()); default: when runLevelsJob was called. */
  began?: number;
}

/**
 * The threads a population proposal may use inside a pool worker. The pool already runs several
 * jobs side by side, one per worker, on a machine of few cores (2 here): more threads per job
 * only oversubscribe them, and cost each a worker's start-up. So one thread, this one, unless
 * the pool has a single worker; then the machine's cores, each nested worker under the pool's
 * heap limit, and a silent one's chunks taken back after a third of the budget left (so they can
 * still be done before the budget stops the job).
 */
export function proposalThreadsInPool(context: LevelsJobContext, now: number = Date.now()): ProposalThreadOptions {
  if (context.poolSize !== 1) return { threads: 1 };
  const left = context.timeBudgetMs === undefined ? undefined : context.timeBudgetMs - (now - (context.began ?? now));
  return {
    // Nobody asked for threads: they start only when the work left is worth them.
    workersAtOnce: false,
    ...(left === undefined ? {} : { stallMs: stallForBudget(Math.max(0, left)) }),
    ...(context.workerHeapMb === undefined ? {} : { heapMb: context.workerHeapMb }),
  };
}

export function runLevelsJob(job: Pick<JobRequest, 'kind' | 'scenario' | 'objective' | 'rule' | 'maxOutputPoints' | 'maxResponseBytes'>, context: LevelsJobContext = {}): Reply {
  const began = context.began ?? Date.now();
  // The answer's text is the measure of its size (a fit's curves follow the output grid).
  const answer = (value: unknown): Reply => {
    const body = JSON.stringify(value);
    const bytes = job.maxResponseBytes === undefined ? 0 : Buffer.byteLength(body, 'utf8');
    if (job.maxResponseBytes !== undefined && bytes > job.maxResponseBytes) {
      return problems(422, [{ path: job.kind === 'fit' ? 'output.step' : '', message: `the answer came to ${megabytes(bytes)}; this server answers at most ${megabytes(job.maxResponseBytes)} (use the command line)` }]);
    }
    return { status: 200, contentType: 'application/json', body };
  };
  const parsed = parseScenario(job.scenario);
  if (!parsed.ok) return problems(400, parsed.problems);
  const model = buildModel(parsed.value);
  if (!model.ok) return problems(400, model.problems);
  if (job.kind === 'nca') {
    // ?rule= wins over the scenario's nca.rule; a wrong `nca` section is 400 with its path, as any field.
    const rule: NcaRule | undefined = job.rule;
    const nca = ncaOfModel(model.value, { ...(rule ? { rule } : {}), ...(parsed.value.nca ? { section: parsed.value.nca } : {}) });
    return nca.ok ? answer(nca.value) : problems(400, nca.problems);
  }
  if (job.kind === 'fit') {
    const overrides: { objective?: Objective } = job.objective ? { objective: job.objective } : {};
    // The plan is read first so that wrong settings (an unknown quantity, more quantities than levels) are 400.
    const points = model.value.outputTimes.length;
    // The predicted curve and its band follow the output grid: the same limit as a simulation's.
    if (points > job.maxOutputPoints) return problems(400, [{ path: 'output.step', message: `asks for ${points} reported times; this server answers at most ${job.maxOutputPoints} (use the command line for larger runs)` }]);
    const plan = readFitPlan(parsed.value, model.value, overrides);
    if (!plan.ok) return problems(400, plan.problems);
    const fit = fitScenario(job.scenario, overrides);
    return fit.ok ? answer({ ...fit.value, caution: fitCaution }) : problems(422, fit.problems);
  }
  if (job.kind === 'propose') {
    const settings = readPropose(parsed.value, model.value);
    if (!settings.ok) return problems(400, settings.problems);
    // A population basis is checked before the subjects run: a missing population section, its
    // own fields and the limits (subjects, subjects × regimens) are the request's fault, 400.
    if (parsed.value.propose?.basis === 'population') {
      const checked = checkPopulationProposals(parsed.value, model.value, settings.value, populationProposalLimits);
      if (checked.length > 0) return problems(400, checked);
    }
    // One thread in a pool of several workers (see proposalThreadsInPool).
    const proposed = proposeOnThreads(job.scenario, populationProposalLimits, proposalThreadsInPool({ ...context, began }));
    return proposed.ok ? answer(proposed.value) : problems(422, proposed.problems);
  }
  return problems(500, [{ path: '', message: `internal error: no levels job '${job.kind}'` }]);
}
