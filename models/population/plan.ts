/**
 * A population run's plan, read once from the scenario: who the subjects are (covariate
 * distributions or rows, varying quantities and their correlations), what each one yields
 * (concentrations on the output grid, figures per period) and what is summarised.
 */
import type { Model, ModelThreshold } from '../building/model.ts';
import { finalInterval, intervalStarts } from '../figures/exposure.ts';
import { maintenanceLines } from '../figures/steady-state.ts';
import type { Outcome, Problem } from '../scenario/problems.ts';
import type { Period, Population, Scenario } from '../scenario/schema.ts';
import { readShare } from '../scenario/shares.ts';
import { convertQuantity } from '../scenario/units.ts';
import { correlationFactor } from './correlation.ts';
import { readCovariatePlan, type CovariatePlan } from './covariates.ts';
import { figureLayout, type FigureLayout } from './layout.ts';
import { readRegimens, type RegimenVariant } from './regimens.ts';
import { periodWords, readTargets, type ReadTarget } from './targets.ts';
import { quantityLabel, varyingQuantities, type VaryingQuantity } from './varying.ts';

export interface PopulationPlan {
  /** The scenario without its population section. */
  scenario: Scenario;
  /** The typical subject's model: units, compartments, output times. */
  template: Model;
  subjects: number;
  seed: number;
  percentiles: number[];
  histogramBins: number;
  covariates: CovariatePlan;
  varying: VaryingQuantity[];
  /** Cholesky factor of the correlations of the varying quantities; null when they are independent. */
  factor: Float64Array | null;
  correlations: { between: [string, string]; value: number }[];
  residual: { additive: number; proportional: number } | null;
  targets: ReadTarget[];
  /** For each target, its window among layout.thresholds (above and window targets), else −1. */
  targetWindows: number[];
  layout: FigureLayout;
  regimens: RegimenVariant[];
  /** Layout of a regimen's figures: the targets' periods only. */
  regimenLayout: FigureLayout | null;
  ceilingAtLeast: number;
  /** 24 h in the scenario's time unit, for AUC per 24 h. */
  day: number;
  /** What the result must say about how its periods were read (lastIntervalNote). */
  notes: string[];
}

export function readPlan(scenario: Scenario, template: Model, overrides: { subjects?: number; seed?: number } = {}): Outcome<PopulationPlan> {
  const p = scenario.population as Population;
  const problems: Problem[] = [];
  const fail = (path: string, message: string) => problems.push({ path, message });
  const covariates = readCovariatePlan(p, problems);
  const varying = varyingQuantities(scenario);
  const factor = readCorrelations(p, varying, problems);
  const residual = readResidual(p, template, problems);
  const targets = readTargets(p, template, problems);

  const thresholds: ModelThreshold[] = [...template.thresholds];
  const targetWindows = targets.map((t) => {
    if (t.measure !== 'above' && t.measure !== 'window') return -1;
    thresholds.push({ compartment: t.compartment, above: t.from, below: t.measure === 'window' ? t.to : null, index: thresholds.length });
    return thresholds.length - 1;
  });
  const steady = maintenanceLines(template).length > 0;
  const intervals = intervalStarts(template, new Float64Array(0)).length;
  const available = (period: Period): string | null => {
    if (period === 'steady state') return steady ? null : 'the regimen has no repeated dose line, so it has no steady state';
    if (intervals === 0) return 'no dose is given within the simulated span';
    if (typeof period === 'number' && period > intervals) return `the simulated span holds ${intervals} dosing interval${intervals === 1 ? '' : 's'}`;
    return null;
  };
  targets.forEach((t) => {
    const why = available(t.period);
    if (why) fail(`population.targets[${t.index}].when`, `${periodWords(t.period)}: ${why}`);
  });
  let periods: Period[];
  if (p.periods) {
    periods = [];
    p.periods.forEach((period, k) => {
      const why = available(period);
      if (why) fail(`population.periods[${k}]`, `${periodWords(period)}: ${why}`);
      if (!periods.includes(period)) periods.push(period);
    });
  } else {
    periods = (['steady state', 'first interval'] as Period[]).filter((q) => available(q) === null);
  }
  for (const t of targets) if (!periods.includes(t.period) && available(t.period) === null) periods.push(t.period);

  const notes: string[] = [];
  const lastNote = periods.includes('last interval') ? lastIntervalNote(template) : null;
  if (lastNote) notes.push(lastNote);
  const banded = template.compartments.flatMap((c, i) => (c.volume !== null ? [i] : []));
  const layout = figureLayout(periods, banded, thresholds);
  const regimens = readRegimens(scenario, p, targets.length, problems);
  const targetPeriods = [...new Set(targets.map((t) => t.period))];
  const ceilingAtLeast = p.regimens ? readShare(p.regimens.ceilingAtLeast, 'population.regimens.ceilingAtLeast', { fail }, 'a share of subjects') : 0.9;
  if (problems.length > 0) return { ok: false, problems };
  const { population: _dropped, ...rest } = scenario;
  return {
    ok: true,
    value: {
      scenario: rest as Scenario,
      template,
      subjects: overrides.subjects ?? p.subjects,
      seed: overrides.seed ?? p.seed,
      percentiles: [...p.percentiles].sort((a, b) => a - b),
      histogramBins: p.histogramBins,
      covariates,
      varying,
      factor,
      correlations: p.correlations,
      residual,
      targets,
      targetWindows,
      layout,
      regimens,
      regimenLayout: regimens.length > 0 ? figureLayout(targetPeriods, banded, thresholds) : null,
      ceilingAtLeast: ceilingAtLeast ?? 0.9,
      day: (() => {
        const d = convertQuantity('24 h', 'time', template.units);
        return d.ok ? d.value : NaN;
      })(),
      notes,
    },
  };
}

/**
 * "last interval" is the final dose's interval, read over one dosing interval (periodWindow);
 * when the span ends sooner after the final dose, that interval is cut short and "last interval"
 * is the one before it — the result says which was read, lest a peak target "at the last
 * interval" be taken to include the final dose's peak.
 */
function lastIntervalNote(template: Model): string | null {
  const starts = intervalStarts(template, new Float64Array(0));
  const n = starts.length;
  if (n < 2 || finalInterval(template, starts).troughAtEnd) return null;
  const unit = template.units.time;
  const at = (t: number) => `${Number(t.toPrecision(6))} ${unit}`;
  return (
    `"last interval" is dosing interval ${n - 1} (${at(starts[n - 2])} to ${at(starts[n - 1])}): the span ends ${at(template.end - starts[n - 1])} after the final dose, ` +
    `less than a dosing interval, so the final dose's interval (${n}) is cut short and read only by its number`
  );
}

/** The correlation matrix of the varying quantities from the named pairs, and its Cholesky factor. */
function readCorrelations(p: Population, varying: VaryingQuantity[], problems: Problem[]): Float64Array | null {
  if (p.correlations.length === 0) return null;
  const n = varying.length;
  const matrix = new Float64Array(n * n);
  for (let i = 0; i < n; i++) matrix[i * n + i] = 1;
  const names = varying.map(quantityLabel);
  const known = varying.filter((v) => v.name !== null).map((v) => `'${v.name}'`);
  let bad = false;
  const seen = new Map<string, number>();
  p.correlations.forEach((c, k) => {
    const path = `population.correlations[${k}]`;
    const ends = c.between.map((name, e) => {
      const i = varying.findIndex((v) => v.name === name);
      if (i < 0) {
        problems.push({ path: `${path}.between[${e}]`, message: `no varying quantity is named '${name}' (${known.length > 0 ? `named and varying: ${known.join(', ')}` : 'give a quantity `name` and `cv`'})` });
        bad = true;
      }
      return i;
    });
    if (ends[0] < 0 || ends[1] < 0) return;
    if (ends[0] === ends[1]) {
      problems.push({ path: `${path}.between`, message: 'names one quantity twice; a quantity is correlated with itself by 1' });
      bad = true;
      return;
    }
    const key = [...ends].sort().join('|');
    if (seen.has(key)) {
      problems.push({ path: `${path}.between`, message: `this pair is already given at population.correlations[${seen.get(key)}]` });
      bad = true;
      return;
    }
    seen.set(key, k);
    matrix[ends[0] * n + ends[1]] = c.value;
    matrix[ends[1] * n + ends[0]] = c.value;
  });
  if (bad) return null;
  const factor = correlationFactor(matrix, n, names);
  if (!factor.ok) {
    const [i, j] = factor.pair;
    const k = p.correlations.findIndex((c) => {
      const a = varying.findIndex((v) => v.name === c.between[0]);
      const b = varying.findIndex((v) => v.name === c.between[1]);
      return (a === i && b === j) || (a === j && b === i);
    });
    problems.push({ path: k >= 0 ? `population.correlations[${k}].value` : 'population.correlations', message: factor.message });
    return null;
  }
  return factor.factor;
}

function readResidual(p: Population, model: Model, problems: Problem[]): PopulationPlan['residual'] {
  if (!p.residual) return null;
  const fail = (path: string, message: string) => problems.push({ path, message });
  let additive = 0;
  if (p.residual.additive !== undefined) {
    const c = convertQuantity(p.residual.additive, 'concentration', model.units);
    if (!c.ok) fail('population.residual.additive', c.message);
    else if (!(c.value >= 0)) fail('population.residual.additive', 'must not be negative');
    else additive = c.value;
  }
  const proportional = p.residual.proportional === undefined ? 0 : (readShare(p.residual.proportional, 'population.residual.proportional', { fail }, 'a proportional error', 5) ?? 0);
  if (p.residual.additive === undefined && p.residual.proportional === undefined) fail('population.residual', 'needs `additive`, `proportional` or both');
  return { additive, proportional };
}
