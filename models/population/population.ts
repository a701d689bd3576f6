/**
 * A virtual population, the entry point: the plan from the scenario, subjects run in batches,
 * the batches summarised. Threads, processes and cluster shards each run some batches of the
 * same plan; `summarise` of all of them in subject order is the one result.
 */
import { buildModel, parseScenario } from '../scenario/normalize.ts';
import type { Outcome, Problem } from '../scenario/problems.ts';
import { runBatch, type Batch } from './batch.ts';
import { readPlan, type PopulationPlan } from './plan.ts';
import { readCovariatePlan, subjectCovariates } from './covariates.ts';
import { SubjectRandom } from './random.ts';
import type { Scenario, Subject } from '../scenario/schema.ts';
import type { GridPart } from './bands.ts';
import { summarise, type ComputedBands, type PopulationResult } from './summary.ts';
import { batchRanges, shardRange } from './ranges.ts';

export interface PopulationOverrides {
  subjects?: number;
  seed?: number;
}

/** Whether a scenario (any JSON value) has a `population` section to check. */
export function hasPopulation(input: unknown): boolean {
  return typeof input === 'object' && input !== null && 'population' in input && (input as { population?: unknown }).population !== undefined;
}

/** Reads a scenario with a `population` section into the plan every batch runs. */
export function planPopulation(input: unknown, overrides: PopulationOverrides = {}): Outcome<PopulationPlan> {
  const parsed = parseScenario(input);
  if (!parsed.ok) return parsed;
  const scenario = parsed.value;
  if (!scenario.population) {
    return { ok: false, problems: [{ path: 'population', message: 'is required for a population run: at least { "subjects": 1000 }' }] };
  }
  const seed = overrides.seed ?? scenario.population.seed;
  const template = buildModel(withPopulationCovariates(scenario, seed));
  if (!template.ok) return template;
  const plan = readPlan(scenario, template.value, overrides);
  if (!plan.ok) return plan;
  const problems: Problem[] = [];
  plan.value.regimens.forEach((r) => {
    const built = buildModel(withPopulationCovariates(r.scenario, seed, scenario.population));
    if (!built.ok) problems.push(...built.problems.map((p) => ({ path: 'population.regimens', message: `regimen ${r.words}: ${p.path}: ${p.message}` })));
  });
  return problems.length > 0 ? { ok: false, problems } : plan;
}

/**
 * The scenario with every covariate the population supplies (drawn, or a column of its table)
 * that the scenario's own subject lacks, taken from virtual subject 0: the template model is
 * read for its structure only (units, compartments, output times, thresholds), and a relation
 * on a covariate the population gives each subject must not need the typical subject to carry it.
 * Every subject's model is built from its own covariates (subjectVariant). Problems in the
 * covariates themselves are left to readPlan, which names them.
 */
function withPopulationCovariates(scenario: Scenario, seed: number, population = scenario.population): Scenario {
  if (!population) return scenario;
  const problems: Problem[] = [];
  const covariates = readCovariatePlan(population, problems);
  if (problems.length > 0) return scenario;
  const own = scenario.subject ?? {};
  const first = subjectCovariates(covariates, undefined, 0, new SubjectRandom(seed, 0));
  const missing = Object.entries(first).filter(([name]) => !(name in own));
  return missing.length === 0 ? scenario : { ...scenario, subject: { ...Object.fromEntries(missing), ...own } as Subject };
}

/** The whole population in this thread. */
export function simulatePopulation(input: unknown, overrides: PopulationOverrides = {}, progress?: (done: number) => void): Outcome<PopulationResult> {
  const plan = planPopulation(input, overrides);
  if (!plan.ok) return plan;
  const batch = runBatch(plan.value, 0, plan.value.subjects, progress);
  if (!batch.ok) return batch;
  return summarise(plan.value, [batch.value]);
}

export { batchRanges, runBatch, shardRange, summarise, type Batch, type ComputedBands, type GridPart, type PopulationPlan, type PopulationResult };
