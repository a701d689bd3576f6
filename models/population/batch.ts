/**
 * A batch: subjects first … first + count − 1 run in turn, their numbers in flat typed arrays.
 * Batches are what threads, processes and shards hand back; a population is its batches in
 * subject order, whoever computed them.
 */
import type { Outcome } from '../scenario/problems.ts';
import type { PopulationPlan } from './plan.ts';
import { subjectCovariates, tableRowOf } from './covariates.ts';
import { SubjectRandom } from './random.ts';
import { NO_STEADY_STATE, runSubject, SubjectScratch, subjectVariant } from './subject-run.ts';

export interface Batch {
  first: number;
  count: number;
  /**
   * Concentrations: subject s, banded compartment b, output time j at (s·B + b)·T + j, in single
   * precision (relative rounding 6e-8, far below any band's sampling error): a year of hourly
   * values for 1000 subjects is 70 MB rather than 140, and memory first touched costs time.
   */
  grid: Float32Array;
  /** Figures: subject s's row of layout.columns numbers. */
  figures: Float64Array;
  status: Uint8Array;
  /** Regimen r's figures of subject s at (r·count + s)·regimenColumns. */
  regimenFigures: Float64Array;
  regimenStatus: Uint8Array;
  methods: string[];
  /** Largest relative mass-balance error over the batch's runs. */
  worstBalance: number;
  /** The first reason a subject had no steady state, for the warnings. */
  steadyMessage: string | null;
}

/**
 * Runs subjects [first, first + count); `progress` is told after each subject. With `sharedGrid`
 * the concentrations live in a SharedArrayBuffer, so that threads summarising parts of the bands
 * read them where they are rather than each a copy.
 */
export function runBatch(plan: PopulationPlan, first: number, count: number, progress?: (done: number) => void, sharedGrid = false): Outcome<Batch> {
  const B = plan.layout.banded.length;
  const T = plan.template.outputTimes.length;
  const columns = plan.layout.columns;
  const regimenColumns = plan.regimenLayout?.columns ?? 0;
  const variants = plan.regimens.length;
  const batch: Batch = {
    first,
    count,
    grid: sharedGrid ? new Float32Array(new SharedArrayBuffer(count * B * T * Float32Array.BYTES_PER_ELEMENT)) : new Float32Array(count * B * T),
    figures: new Float64Array(count * columns),
    status: new Uint8Array(count),
    regimenFigures: new Float64Array(variants * count * regimenColumns),
    regimenStatus: new Uint8Array(variants * count),
    methods: [],
    worstBalance: 0,
    steadyMessage: null,
  };
  const scratch = new SubjectScratch(plan);
  const methods = new Set<string>();
  for (let s = 0; s < count; s++) {
    const i = first + s;
    const variant = subjectVariant(plan, i, scratch);
    const grid = batch.grid.subarray(s * B * T, (s + 1) * B * T);
    const run = runSubject(plan, plan.scenario, plan.layout, variant, grid, batch.figures.subarray(s * columns, (s + 1) * columns), scratch);
    if (!run.ok) return failed(plan, i, null, run.problems);
    batch.status[s] = run.value.status;
    batch.worstBalance = Math.max(batch.worstBalance, run.value.balance);
    run.value.methods.forEach((m) => methods.add(m));
    if (run.value.status & NO_STEADY_STATE) batch.steadyMessage ??= `virtual subject ${i}: ${run.value.steadyMessage}`;
    for (let r = 0; r < variants; r++) {
      const at = (r * count + s) * regimenColumns;
      const layout = plan.regimenLayout;
      if (!layout) break;
      const out = runSubject(plan, plan.regimens[r].scenario, layout, variant, null, batch.regimenFigures.subarray(at, at + regimenColumns), scratch);
      if (!out.ok) return failed(plan, i, plan.regimens[r].words, out.problems);
      batch.regimenStatus[r * count + s] = out.value.status;
    }
    progress?.(s + 1);
  }
  batch.methods = [...methods].sort();
  return { ok: true, value: batch };
}

/**
 * A subject that cannot be run fails the population, naming the subject and the field. A
 * covariate the population gave the subject is named where it came from — the distribution that
 * drew it, or the table row — with the value it took; once a covariate is refused, the rest of
 * the subject's model (relations, per-kg doses, derived covariates) would only report that it is
 * missing, so only the covariates' own problems are kept.
 */
function failed(plan: PopulationPlan, i: number, regimen: string | null, problems: { path: string; message: string }[]): Outcome<Batch> {
  const who = `virtual subject ${i} (seed ${plan.seed})${regimen ? `, regimen ${regimen}` : ''}`;
  const ofSubject = problems.filter((p) => /^subject\./.test(p.path));
  if (ofSubject.length === 0) return { ok: false, problems: problems.map((p) => ({ path: p.path, message: `${who}: ${p.message}` })) };
  const random = new SubjectRandom(plan.seed, i);
  const row = tableRowOf(plan.covariates, i, random);
  const subject = subjectCovariates(plan.covariates, plan.scenario.subject, i, random) as Record<string, unknown>;
  return {
    ok: false,
    problems: ofSubject.map((p) => {
      const name = p.path.slice('subject.'.length);
      const drawn = plan.covariates.drawn.find((c) => c.name === name);
      const source = drawn
        ? `population.covariates.${name}`
        : row !== null && plan.covariates.rows && name in plan.covariates.rows[row]
          ? `population.covariateTable.rows[${row}].${name}`
          : null;
      if (source === null) return { path: p.path, message: `${who}: ${p.message}` };
      const value = subject[name];
      const took = `${who} ${drawn ? 'drew' : 'took'} ${name} = ${typeof value === 'number' ? shortNumber(value) : shortWritten(String(value))}: ${p.message}`;
      // A distribution that reaches zero or below: its lower bound is what to change.
      const low = drawn?.kind === 'number' ? drawn.distribution.min : undefined;
      const hint = p.message === 'must be positive' && low !== undefined && (low === null || low <= 0) ? ' (give the distribution a `min` above 0)' : '';
      return { path: source, message: took + hint };
    }),
  };
}

function shortNumber(v: number): string {
  return Number(v.toPrecision(6)).toString();
}

/** A drawn "−3.2104477 kg" written with six significant digits. */
function shortWritten(v: string): string {
  const m = /^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)(.*)$/.exec(v);
  return m ? `${shortNumber(Number(m[1]))}${m[2]}` : v;
}
