/**
 * A population's batches, in subject order, summarised: percentile bands over time, the
 * distribution of every figure per period, and the probability of each target with its Monte
 * Carlo standard error. Everything here is a function of the subjects' numbers alone, so the
 * same subjects computed in any split give the same result.
 */
import { resultUnits, type ResultUnits } from '../simulate.ts';
import type { Outcome } from '../scenario/problems.ts';
import type { AdjustedQuantity, Scenario } from '../scenario/schema.ts';
import { readShare } from '../scenario/shares.ts';
import type { Batch } from './batch.ts';
import { bandShape, bandValues, type GridPart } from './bands.ts';
import { FIGURES, figureColumn, periodIndex, windowColumn, type FigureLayout, type FigureName } from './layout.ts';
import { histogramOfSorted, percentileOfSorted, type Histogram } from './percentiles.ts';
import type { PopulationPlan } from './plan.ts';
import { NO_STEADY_STATE } from './subject-run.ts';
import { periodWords, meets, type ReadTarget } from './targets.ts';
import { quantityLabel } from './varying.ts';
import { writtenQuantity, type RegimenVariant } from './regimens.ts';

export const POPULATION_CAUTION =
  'Population figures describe a model population drawn from the distributions given, not a patient. ' +
  'This is a simulation for review, not dosing advice: follow local protocols, product labelling and licensed clinical judgement.';

/** One figure's distribution over the subjects. */
export interface FigureSummary {
  /** Percentile → value, keyed as written ("5", "50", "95"). */
  percentiles: Record<string, number>;
  mean: number;
  /** Subjects with a value (those without one, e.g. no steady state, are left out). */
  subjects: number;
  histogram: Histogram | null;
}

export interface WindowSummary {
  label: string;
  /** The share of the interval above the level, or within the window. */
  share: FigureSummary;
}

export interface PeriodSummary {
  period: string;
  compartments: Record<string, Record<FigureName, FigureSummary> & { windows: WindowSummary[] }>;
  /** Subjects for which this period's figures could not be determined (no steady state). */
  undetermined: number;
}

export interface Attainment {
  target: string;
  index: number;
  period: string;
  compartment: string;
  probability: number;
  /** Monte Carlo (binomial) standard error √(p(1 − p)/N). */
  standardError: number;
  attained: number;
  subjects: number;
  /** Subjects whose figure could not be determined; they count as not attaining. */
  undetermined: number;
}

export interface RegimenRow {
  regimen: string;
  /** The regimen's amount, interval and infusion duration as the grid writes them ("500 mg", "12 h"); null where the grid does not vary it. */
  amount: string | null;
  interval: string | null;
  duration: string | null;
  attainment: Attainment[];
  /** Share of subjects meeting every target that asks for at least a level; null when no target does (only ceilings). */
  joint: { probability: number; standardError: number } | null;
  /** Share meeting every ceiling target (an upper bound only); 1 when there is none. */
  ceiling: { probability: number; standardError: number };
}

type VariationKind = NonNullable<AdjustedQuantity['variation']>;

export interface VaryingSetting {
  quantity: string;
  path: string;
  cv: number;
  variation: VariationKind;
}

export interface PopulationResult {
  title: string;
  subjects: number;
  seed: number;
  units: ResultUnits;
  percentiles: string[];
  times: number[];
  bands: Record<string, Record<string, number[]>>;
  /** Bands of simulated observations (with residual error), when a residual error is given. */
  observationBands: Record<string, Record<string, number[]>> | null;
  /** The figures of the headline period (steady state when computed), by compartment and figure. */
  exposure: Record<string, Record<string, FigureSummary | WindowSummary[]>>;
  headlinePeriod: string;
  periods: PeriodSummary[];
  attainment: Attainment[];
  regimens: { rows: RegimenRow[]; best: number | null; rule: string } | null;
  settings: {
    covariates: string[];
    /** Each varying quantity with its coefficient of variation (a fraction) and how it varies. */
    varying: VaryingSetting[];
    correlations: { between: [string, string]; value: number }[];
    residual: PopulationPlan['residual'];
  };
  diagnostics: {
    methods: string[];
    worstMassBalance: number;
    subjectsWithoutSteadyState: number;
    warnings: string[];
  };
  caution: string;
}

function percentKey(q: number): string {
  return String(q);
}

function summarise1(values: Float64Array, n: number, plan: PopulationPlan): FigureSummary {
  // NaN (undetermined) sorts last in a typed array; count only the determined values.
  const sorted = values.subarray(0, n).sort();
  let m = n;
  while (m > 0 && Number.isNaN(sorted[m - 1])) m--;
  const percentiles: Record<string, number> = {};
  for (const q of plan.percentiles) percentiles[percentKey(q)] = percentileOfSorted(sorted, m, q);
  let sum = 0;
  for (let i = 0; i < m; i++) sum += sorted[i];
  return { percentiles, mean: m > 0 ? sum / m : NaN, subjects: m, histogram: histogramOfSorted(sorted, m, plan.histogramBins) };
}

/** The batches cover subjects 0 … N − 1 once each, in order; otherwise a problem. */
export function checkCoverage(batches: readonly Batch[], subjects: number): string | null {
  let next = 0;
  for (const b of batches) {
    if (b.first !== next) return b.first > next ? `subjects ${next} to ${b.first - 1} are missing` : `subject ${b.first} appears twice`;
    next = b.first + b.count;
  }
  return next === subjects ? null : `subjects ${next} to ${subjects - 1} are missing`;
}

/** Bands computed beforehand (in threads: bandValues over ranges, joined), for all times. */
export interface ComputedBands {
  bands: Float64Array;
  observationBands: Float64Array | null;
}

export function summarise(plan: PopulationPlan, unordered: readonly Batch[], computed?: ComputedBands): Outcome<PopulationResult> {
  const batches = [...unordered].sort((a, b) => a.first - b.first);
  const gap = checkCoverage(batches, plan.subjects);
  if (gap) return { ok: false, problems: [{ path: 'population', message: `the parts do not make up the population of ${plan.subjects}: ${gap}` }] };
  const N = plan.subjects;
  const layout = plan.layout;
  const model = plan.template;
  const B = layout.banded.length;
  const ids = layout.banded.map((c) => model.compartments[c].id);
  const column = new Float64Array(N);

  const gather = (read: (batch: Batch, s: number) => number) => {
    let k = 0;
    for (const b of batches) for (let s = 0; s < b.count; s++) column[k++] = read(b, s);
  };

  const bands = computed ? bandRecords(plan, ids, computed.bands) : bandsOf(plan, batches, ids, null);
  const observationBands = !plan.residual ? null : computed?.observationBands ? bandRecords(plan, ids, computed.observationBands) : bandsOf(plan, batches, ids, plan.residual);

  const figureSummary = (col: number, read: (batch: Batch, s: number, col: number) => number): FigureSummary => {
    gather((batch, s) => read(batch, s, col));
    return summarise1(column, N, plan);
  };
  const mainRead = (batch: Batch, s: number, col: number) => batch.figures[s * layout.columns + col];

  const periods: PeriodSummary[] = layout.periods.map((period, p) => {
    const compartments: PeriodSummary['compartments'] = {};
    for (let b = 0; b < B; b++) {
      const figures = {} as Record<FigureName, FigureSummary>;
      for (const f of FIGURES) figures[f] = figureSummary(figureColumn(layout, p, b, f), mainRead);
      const windows = layout.windows[b].map((k) => ({ label: windowLabel(layout.thresholds[k], plan), share: figureSummary(windowColumn(layout, p, b, k), mainRead) }));
      compartments[ids[b]] = { ...figures, windows };
    }
    let undetermined = 0;
    if (period === 'steady state') for (const batch of batches) for (let s = 0; s < batch.count; s++) if (batch.status[s] & NO_STEADY_STATE) undetermined++;
    return { period: periodWords(period), compartments, undetermined };
  });
  const headline = Math.max(0, layout.periods.indexOf('steady state'));
  const exposure: PopulationResult['exposure'] = {};
  if (periods.length > 0) for (const id of ids) exposure[id] = periods[headline].compartments[id];

  const attainment = plan.targets.map((t, k) => attain(plan, layout, t, plan.targetWindows[k], batches, (batch, s, col) => batch.figures[s * layout.columns + col]));

  const regimens = plan.regimenLayout ? compareRegimens(plan, plan.regimenLayout, batches) : null;
  const withoutSteady = periods.find((p) => p.period === 'steady state')?.undetermined ?? 0;
  // How the plan read its periods (a "last interval" that is not the final dose's), then what the subjects gave.
  const warnings: string[] = [...plan.notes];
  if (withoutSteady > 0) {
    const first = batches.find((b) => b.steadyMessage)?.steadyMessage;
    warnings.push(`${withoutSteady} of ${N} virtual subjects have no steady state; their steady-state figures are left out of the percentiles and count as not attaining any target${first ? ` (${first})` : ''}`);
  }
  return {
    ok: true,
    value: {
      title: model.title,
      subjects: N,
      seed: plan.seed,
      units: resultUnits(model),
      percentiles: plan.percentiles.map(percentKey),
      times: Array.from(model.outputTimes),
      bands,
      observationBands,
      exposure,
      headlinePeriod: periods[headline]?.period ?? '',
      periods,
      attainment,
      regimens,
      settings: {
        covariates: describeCovariates(plan),
        varying: varyingSettings(plan),
        correlations: plan.correlations,
        residual: plan.residual,
      },
      diagnostics: {
        methods: [...new Set(batches.flatMap((b) => b.methods))].sort(),
        worstMassBalance: batches.reduce((w, b) => Math.max(w, b.worstBalance), 0),
        subjectsWithoutSteadyState: withoutSteady,
        warnings,
      },
      caution: POPULATION_CAUTION,
    },
  };
}

function windowLabel(t: { above: number | null; below: number | null }, plan: PopulationPlan): string {
  const u = resultUnits(plan.template).concentration;
  const n = (v: number) => Number(v.toPrecision(6));
  if (t.above !== null && t.below !== null) return `${n(t.above)}–${n(t.below)} ${u}`;
  return t.above !== null ? `above ${n(t.above)} ${u}` : `below ${n(t.below as number)} ${u}`;
}

/**
 * Each varying quantity with its cv and kind of variation, read back from the scenario the plan
 * holds (the reader has accepted both): log-normal unless written, logit-normal for a
 * bioavailability (the only fraction that varies), as models/scenario/normalize.ts reads them.
 */
function varyingSettings(plan: PopulationPlan): VaryingSetting[] {
  return plan.varying.map((v) => {
    const q = quantityAt(plan.scenario, v.path);
    const cv = q?.cv === undefined ? NaN : (readShare(q.cv, `${v.path}.cv`, { fail: () => undefined }, 'a coefficient of variation', 5) ?? NaN);
    const variation: VariationKind = q?.variation ?? (v.path.endsWith('.bioavailability') ? 'logit-normal' : 'log-normal');
    return { quantity: quantityLabel(v), path: v.path, cv, variation };
  });
}

/** The quantity at a varying quantity's path such as "transfers[0].cl" (varyingQuantities writes only these forms). */
function quantityAt(scenario: Scenario, path: string): AdjustedQuantity | undefined {
  let node: unknown = scenario;
  for (const key of path.split(/[.[\]]/).filter(Boolean)) {
    if (typeof node !== 'object' || node === null) return undefined;
    node = (node as Record<string, unknown>)[key];
  }
  return typeof node === 'object' && node !== null ? (node as AdjustedQuantity) : undefined;
}

function describeCovariates(plan: PopulationPlan): string[] {
  const words = plan.covariates.drawn.map((c) => {
    if (c.kind === 'category') return `${c.name}: ${c.categories.map((k, j) => `${k} ${Number(((c.cumulative[j] - (j > 0 ? c.cumulative[j - 1] : 0)) * 100).toPrecision(4))}%`).join(', ')}`;
    const d = c.distribution;
    const u = c.unit ? ` ${c.unit}` : '';
    const bounds = d.kind !== 'uniform' && (d.min !== null || d.max !== null) ? `, truncated to [${d.min ?? '−∞'}, ${d.max ?? '∞'}]${u}` : '';
    if (d.kind === 'normal') return `${c.name}: normal, mean ${d.mean}${u}, SD ${d.sd}${u}${bounds}`;
    if (d.kind === 'log-normal') return `${c.name}: log-normal, median ${d.median}${u}, CV ${Number((d.cv * 100).toPrecision(4))}%${bounds}`;
    return `${c.name}: uniform from ${d.min} to ${d.max}${u}`;
  });
  if (plan.covariates.rows) words.push(`a table of ${plan.covariates.rows.length} covariate rows, taken ${plan.covariates.draw}`);
  return words;
}

/** Whether subject s of a batch meets target t, from its figures. */
function attains(layout: FigureLayout, t: ReadTarget, window: number, read: (s: number, col: number) => number, s: number): boolean {
  const p = periodIndex(layout.periods, t.period);
  const b = layout.banded.indexOf(t.compartment);
  if (t.measure === 'above' || t.measure === 'window') return meets(read(s, windowColumn(layout, p, b, window)), t.atLeast, null);
  const figure: FigureName = t.measure === 'peak' ? 'cmax' : t.measure;
  return meets(read(s, figureColumn(layout, p, b, figure)), t.atLeast, t.atMost);
}

function share(k: number, n: number): { probability: number; standardError: number } {
  const p = k / n;
  return { probability: p, standardError: Math.sqrt((p * (1 - p)) / n) };
}

function attain(plan: PopulationPlan, layout: FigureLayout, t: ReadTarget, window: number, batches: readonly Batch[], read: (batch: Batch, s: number, col: number) => number): Attainment {
  let attained = 0;
  let undetermined = 0;
  const p = periodIndex(layout.periods, t.period);
  const b = layout.banded.indexOf(t.compartment);
  const probe = t.measure === 'above' || t.measure === 'window' ? windowColumn(layout, p, b, window) : figureColumn(layout, p, b, t.measure === 'peak' ? 'cmax' : t.measure);
  for (const batch of batches) {
    for (let s = 0; s < batch.count; s++) {
      if (Number.isNaN(read(batch, s, probe))) undetermined++;
      if (attains(layout, t, window, (ss, col) => read(batch, ss, col), s)) attained++;
    }
  }
  const N = plan.subjects;
  return {
    target: t.words,
    index: t.index,
    period: periodWords(t.period),
    compartment: plan.template.compartments[t.compartment].id,
    ...share(attained, N),
    attained,
    subjects: N,
    undetermined,
  };
}

function compareRegimens(plan: PopulationPlan, layout: FigureLayout, batches: readonly Batch[]): NonNullable<PopulationResult['regimens']> {
  const cols = layout.columns;
  const N = plan.subjects;
  // With ceilings only there is no level to attain: no joint share, and regimens rank by the ceiling share.
  const levels = plan.targets.some((t) => !t.ceiling);
  const rows = plan.regimens.map((regimen, r): RegimenRow => {
    const read = (batch: Batch, s: number, col: number) => batch.regimenFigures[(r * batch.count + s) * cols + col];
    const attainment = plan.targets.map((t, k) => attain(plan, layout, t, plan.targetWindows[k], batches, read));
    let joint = 0;
    let ceiling = 0;
    for (const batch of batches) {
      for (let s = 0; s < batch.count; s++) {
        const sub = (ss: number, col: number) => read(batch, ss, col);
        const all = (ceilings: boolean) => plan.targets.every((t, k) => t.ceiling !== ceilings || attains(layout, t, plan.targetWindows[k], sub, s));
        if (all(false)) joint++;
        if (all(true)) ceiling++;
      }
    }
    const as = (q: RegimenVariant['amount']) => (q === null ? null : writtenQuantity(q));
    return { regimen: regimen.words, amount: as(regimen.amount), interval: as(regimen.interval), duration: as(regimen.duration), attainment, joint: levels ? share(joint, N) : null, ceiling: share(ceiling, N) };
  });
  const score = (row: RegimenRow) => (row.joint ?? row.ceiling).probability;
  let best: number | null = null;
  rows.forEach((row, r) => {
    if (row.ceiling.probability < plan.ceilingAtLeast) return;
    if (best === null || score(row) > score(rows[best])) best = r;
  });
  const ceilingPercent = `${Number((plan.ceilingAtLeast * 100).toPrecision(4))}%`;
  return {
    rows,
    best,
    rule: levels
      ? `the regimen with the largest share of subjects meeting every target that asks for at least a level, among those where at least ${ceilingPercent} of subjects keep every ceiling target (an upper bound only); the first listed wins a tie`
      : `the regimen with the largest share of subjects keeping every ceiling target (an upper bound only), among those where at least ${ceilingPercent} of subjects do; no target asks for at least a level, so there is no joint share of level targets; the first listed wins a tie`,
  };
}

/** Percentile bands over time per compartment (bandValues over every output time), as the result's records. */
function bandsOf(plan: PopulationPlan, batches: readonly GridPart[], ids: string[], residual: PopulationPlan['residual']): Record<string, Record<string, number[]>> {
  return bandRecords(plan, ids, bandValues(bandShape(plan), batches, residual, 0, plan.template.outputTimes.length));
}


/** Band values of all times (bandValues from 0 to T) as the result's records, compartment → percentile → series. */
function bandRecords(plan: PopulationPlan, ids: string[], values: Float64Array): Record<string, Record<string, number[]>> {
  const T = plan.template.outputTimes.length;
  const K = plan.percentiles.length;
  const out: Record<string, Record<string, number[]>> = {};
  ids.forEach((id, b) => {
    const keyed: Record<string, number[]> = {};
    plan.percentiles.forEach((q, k) => (keyed[percentKey(q)] = Array.from(values.subarray((b * K + k) * T, (b * K + k + 1) * T))));
    out[id] = keyed;
  });
  return out;
}
