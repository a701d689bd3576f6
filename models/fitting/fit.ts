/**
 * Individual parameters from measured levels: the scenario's `fit` read into a plan, the
 * objective written as a sum of squares, minimised by Levenberg–Marquardt from the typical
 * values (then from ×/÷ 2 on each axis when that does not converge), and the answer with its
 * standard errors, predictions, curve and band, and the fitted scenario.
 *
 * Objectives (r the residual vector the optimiser squares):
 * - wls: r_i = √w_i·(f_i − y_i), w = 1, 1/y, 1/y², or 1/SD(f_i)² from population.residual;
 * - map: r_i = (f_i − y_i)/SD(f_i) for the levels, then u (the prior's Cholesky-whitened
 *   deviations: uᵀu = dᵀR⁻¹d), so −2 log posterior = ‖r‖² + constants.
 * When the SD depends on the prediction (a proportional part), it is held fixed within one
 * Levenberg–Marquardt run and renewed from the new predictions between runs until it settles:
 * generalised least squares with estimated weights (Carroll & Ruppert, Transformation and
 * Weighting in Regression, 1988, ch. 2). The log-variance term of extended least squares is
 * left out on purpose: it is constant within a run, and without it a misstated error model
 * cannot pull the predictions up to shrink the weights (the known bias of extended least squares).
 * Levels below the limit are left out of the fit and said so (fit.belowLimit "exclude", the
 * default), or counted as censored: the probability of a level below the limit (censored.ts).
 */
import type { Model } from '../building/model.ts';
import { buildModel, parseScenario } from '../scenario/normalize.ts';
import type { Outcome } from '../scenario/problems.ts';
import type { Scenario } from '../scenario/schema.ts';
import { displayUnit } from '../scenario/units.ts';
import { predictedCurves } from './band.ts';
import { inverseSpd, normalMatrix, symmetricEigen } from './dense.ts';
import { fittedScenario } from './fitted-scenario.ts';
import { defaultLmOptions, levenbergMarquardt, type LeastSquares, type LeastSquaresOutcome } from './levenberg-marquardt.ts';
import { Parameters } from './parameters.ts';
import { FIT_RTOL, Predictor } from './predictor.ts';
import { censoredResidual } from './censored.ts';
import { residualSd } from './residual-error.ts';
import type { FitEstimate, FitPrediction, FitResult } from './result.ts';
import { readFitPlan, type FitPlan, type Objective } from './settings.ts';

export interface FitOptions {
  /** Overrides fit.objective (the command line's --objective). */
  objective?: Objective;
  /** Draw the 90% band (200 simulations); default true. */
  band?: boolean;
  /**
   * map: every prior spread taken this many times wider in the objective (the prior rows become
   * u/widen), while the population's effects keep the scenario's spreads; default 1. A seam for
   * tests of the flat-prior limit beyond the largest cv the scenario format accepts (500%).
   */
  widenPrior?: number;
}

const CONDITION_LIMIT = 1e10;
const MAX_WEIGHT_PASSES = 20;
const WEIGHT_TOLERANCE = 1e-6;

/** Each estimated quantity's value at p = 0 for this subject: the typical model's value after its covariate relations. */
function baseValues(plan: FitPlan, template: Model): Float64Array {
  const adjusted = new Map((template.subject?.adjustments ?? []).map((a) => [a.path, a.value]));
  return Float64Array.from(plan.estimated.map((e) => adjusted.get(e.slot.path) ?? e.typical));
}

/** The weighted residuals of the levels, and the prior's rows for map. */
class Objectives implements LeastSquares {
  readonly residualCount: number;
  readonly unknowns: number;
  readonly lower: Float64Array;
  readonly upper: Float64Array;
  /** Weights' square roots, one per usable level, fixed during one optimiser run. */
  readonly roots: Float64Array;
  readonly all: Float64Array;
  /** For each censored level: 1/SD, fixed like `roots`. */
  readonly censoredRoots: Float64Array;
  private readonly used: number[];
  private readonly censoredAt: number[];
  private readonly limits: Float64Array;
  private readonly observed: Float64Array;
  private readonly stepFloor: number;

  constructor(readonly plan: FitPlan, readonly params: Parameters, readonly predictor: Predictor, template: Model, private readonly priorScale = 1) {
    this.used = plan.usable.map((o) => template.observations.indexOf(o));
    this.observed = Float64Array.from(plan.usable.map((o) => o.concentration as number));
    this.censoredAt = plan.censored.map((o) => template.observations.indexOf(o));
    this.limits = Float64Array.from(plan.censored.map((o) => o.limit as number));
    this.censoredRoots = new Float64Array(this.censoredAt.length);
    this.unknowns = params.count;
    this.residualCount = this.used.length + this.censoredAt.length + (params.map ? params.count : 0);
    this.lower = params.lower;
    this.upper = params.upper;
    this.roots = new Float64Array(this.used.length);
    this.all = new Float64Array(template.observations.length);
    // ε^(1/3) on the exact path; on the adaptive path the prediction carries noise ~rtol, and the
    // step that balances h² against rtol/h is rtol^(1/3) (Nocedal & Wright §8.1).
    this.stepFloor = template.linear || template.solver.method === 'exact' ? Math.cbrt(Number.EPSILON) : Math.cbrt(FIT_RTOL);
    this.setWeights(null);
  }

  stepAt(x: number): number {
    return this.stepFloor * Math.max(1, Math.abs(x));
  }

  /** Weights from the plan's rule; for residual-error weights, at the predictions `f` (or the observations before any). */
  setWeights(f: Float64Array | null): number {
    let change = 0;
    this.used.forEach((at, i) => {
      const y = this.observed[i];
      let root: number;
      if (this.plan.objective === 'map' || this.plan.weighting === 'residual') root = 1 / residualSd(this.plan.residual as NonNullable<FitPlan['residual']>, f ? f[at] : y);
      else if (this.plan.weighting === '1/y') root = 1 / Math.sqrt(y);
      else if (this.plan.weighting === '1/y2') root = 1 / y;
      else root = 1;
      if (this.roots[i] !== 0) change = Math.max(change, Math.abs(root / this.roots[i] - 1));
      this.roots[i] = root;
    });
    this.censoredAt.forEach((at, i) => {
      // The SD at the prediction (at the limit before any): censoring needs the residual error.
      const root = 1 / residualSd(this.plan.residual as NonNullable<FitPlan['residual']>, f ? f[at] : this.limits[i]);
      if (this.censoredRoots[i] !== 0) change = Math.max(change, Math.abs(root / this.censoredRoots[i] - 1));
      this.censoredRoots[i] = root;
    });
    return change;
  }

  residuals(x: Float64Array, out: Float64Array): boolean {
    if (!this.predictor.predict(x, this.all)) return false;
    this.used.forEach((at, i) => {
      out[i] = this.roots[i] * (this.all[at] - this.observed[i]);
    });
    const m = this.used.length;
    this.censoredAt.forEach((at, i) => {
      out[m + i] = censoredResidual(this.censoredRoots[i] * (this.limits[i] - this.all[at]));
    });
    const c = m + this.censoredAt.length;
    // The prior's rows: u, or u/widen when the prior is widened (−2 log prior = uᵀu/widen²).
    if (this.params.map) for (let k = 0; k < this.unknowns; k++) out[c + k] = this.priorScale * x[k];
    return true;
  }

  /** The levels' count (quantified and censored: the rows before the prior's). */
  get levels(): number {
    return this.used.length + this.censoredAt.length;
  }
}

/** One Levenberg–Marquardt run per weight pass, the weights renewed from the predictions until they settle. */
function minimise(problem: Objectives, start: Float64Array): { outcome: LeastSquaresOutcome; iterations: number } {
  let x = start;
  let iterations = 0;
  let outcome = levenbergMarquardt(problem, x, defaultLmOptions);
  iterations += outcome.iterations;
  const varying = problem.plan.residual !== null && problem.plan.residual.proportional > 0 && (problem.plan.objective === 'map' || problem.plan.weighting === 'residual' || problem.plan.censored.length > 0);
  for (let pass = 1; varying && pass < MAX_WEIGHT_PASSES && outcome.reason !== 'failed'; pass++) {
    x = outcome.x;
    if (!problem.predictor.predict(x, problem.all)) break;
    const change = problem.setWeights(problem.all);
    if (change < WEIGHT_TOLERANCE) break;
    outcome = levenbergMarquardt(problem, x, defaultLmOptions);
    iterations += outcome.iterations;
  }
  return { outcome, iterations };
}

/** The starts after the typical values: each axis ×2 and ÷2 (in map, ±ln 2 / spread), inside the bounds. */
function startingPoints(params: Parameters): Float64Array[] {
  const out: Float64Array[] = [new Float64Array(params.count)];
  params.plan.estimated.forEach((e, i) => {
    const step = params.map ? Math.LN2 / (e.spread as number) : Math.LN2;
    for (const sign of [1, -1]) {
      const x = new Float64Array(params.count);
      x[i] = Math.min(params.upper[i], Math.max(params.lower[i], sign * step));
      out.push(x);
    }
  });
  return out;
}

const reasonWords: Record<LeastSquaresOutcome['reason'], string> = {
  objective: 'the objective stopped changing (relative change below 1e-12)',
  gradient: 'the gradient vanished (below 1e-9 relative to the objective)',
  step: 'the steps became too small to change the estimates',
  iterations: `it reached the limit of ${defaultLmOptions.maxIterations} iterations`,
  failed: 'the model could not be evaluated near the estimates',
};

function unitOf(plan: FitPlan, i: number, template: Model): string {
  const d = plan.estimated[i].slot.dimension;
  return d === null ? 'fraction' : displayUnit(d, template.units);
}

/**
 * Which quantities the data cannot identify: a near-singular curvature (its weakest direction)
 * or a relative SE over 100%. `relative` turns the weakest direction from the optimiser's
 * coordinates into relative changes of the values before the quantities in it are named, so F
 * on a logit scale and V, CL on log scales weigh alike (F·V·CL scaled together moves each by
 * the same fraction). Every line begins with the same lead words, so the message can make it a
 * sentence without touching a label (a JSON path or a name keeps its case).
 */
function identifiability(a: Float64Array, labels: string[], rse: (number | null)[], relative: (v: Float64Array) => Float64Array): { lines: string[]; condition: number } {
  const k = labels.length;
  const { values, vectors } = symmetricEigen(a, k);
  let lo = 0;
  let hi = 0;
  for (let i = 1; i < k; i++) {
    if (values[i] < values[lo]) lo = i;
    if (values[i] > values[hi]) hi = i;
  }
  const condition = values[lo] > 0 ? values[hi] / values[lo] : Infinity;
  const lines: string[] = [];
  if (condition > CONDITION_LIMIT) {
    const weak = Float64Array.from(labels, (_, i) => vectors[i * k + lo]);
    const weights = Array.from(relative(weak), Math.abs);
    const top = Math.max(...weights);
    const involved = labels.filter((_, i) => weights[i] >= 0.3 * top);
    const listed = involved.length <= 2 ? involved.join(' and ') : `${involved.slice(0, -1).join(', ')} and ${involved[involved.length - 1]}`;
    lines.push(involved.length === 1
      ? `${LEAD} cannot identify ${involved[0]}: changing it hardly changes the predictions (condition number ${condition.toExponential(1)})`
      : `${LEAD} cannot tell ${listed} apart: they can change together without changing the predictions (condition number ${condition.toExponential(1)})`);
  }
  rse.forEach((r, i) => {
    if (r !== null && r > 1) lines.push(`${LEAD} determine ${labels[i]} poorly: its relative standard error is ${(100 * r).toFixed(0)}% (over 100%)`);
  });
  return { lines, condition };
}

/** The words every identifiability line opens with; `sentence` capitalises only them. */
const LEAD = 'the levels';

/** A line as a sentence: its lead word capitalised, the rest (labels included) as written. */
function sentence(line: string): string {
  return line.startsWith(LEAD) ? `The${line.slice(3)}` : line;
}

export function fitScenario(input: unknown, options: FitOptions = {}): Outcome<FitResult> {
  const parsed = parseScenario(input);
  if (!parsed.ok) return parsed;
  const s: Scenario = parsed.value;
  const built = buildModel(s);
  if (!built.ok) return built;
  const template = built.value;
  const read = readFitPlan(s, template, options);
  if (!read.ok) return read;
  const plan = read.value;
  const params = new Parameters(plan, baseValues(plan, template));
  const predictor = new Predictor(s, params, template);
  const problem = new Objectives(plan, params, predictor, template, 1 / (options.widenPrior ?? 1));
  const k = params.count;

  // The typical values first; the other starts only when that run does not converge.
  let best: { outcome: LeastSquaresOutcome; iterations: number } | null = null;
  let iterations = 0;
  let starts = 0;
  for (const start of startingPoints(params)) {
    starts++;
    problem.setWeights(null);
    const run = minimise(problem, start);
    iterations += run.iterations;
    const better = best === null || (run.outcome.converged && !best.outcome.converged) || (run.outcome.converged === best.outcome.converged && run.outcome.cost < best.outcome.cost);
    if (better) best = run;
    if (best?.outcome.converged) break;
  }
  const outcome = (best as { outcome: LeastSquaresOutcome }).outcome;
  if (outcome.reason === 'failed' && !Number.isFinite(outcome.cost)) {
    return { ok: false, problems: [{ path: 'fit', message: 'the model could not be evaluated at the typical values or near them; check that the scenario simulates' }] };
  }
  const x = outcome.x;
  const n = problem.levels;
  const labels = plan.estimated.map((e) => e.label);

  // Curvature: JᵀWJ of the weighted (and, for map, whitened) residuals in the transformed coordinates.
  const a = normalMatrix(outcome.jacobian, problem.residualCount, k);
  const inverse = inverseSpd(a, k);
  let covariance: Float64Array | null = null;
  const notes: string[] = [];
  if (inverse) {
    if (params.map) covariance = inverse;
    else if (n > k) {
      // s² = SSR/(n − p): the error's scale estimated from the residuals.
      const s2 = outcome.cost / (n - k);
      covariance = inverse.map((v) => v * s2);
    } else notes.push(`no standard errors: ${n} levels for ${k} quantities leave no degree of freedom to estimate the error's scale`);
  }
  // The covariance of the coordinates the values depend on: p itself (wls), d = L₁₁u (map).
  let natural: Float64Array | null = covariance;
  if (covariance && params.map) {
    const L = plan.factor as Float64Array;
    const size = k + plan.others.length;
    natural = new Float64Array(k * k);
    for (let i = 0; i < k; i++) for (let j = 0; j < k; j++) {
      let sum = 0;
      for (let r = 0; r <= i; r++) for (let c = 0; c <= j; c++) sum += L[i * size + r] * covariance[r * k + c] * L[j * size + c];
      natural[i * k + j] = sum;
    }
  }
  if (params.map) params.setEffects(x);
  const values = plan.estimated.map((_, i) => params.value(i, x));
  const estimates: Record<string, FitEstimate> = {};
  const rse: (number | null)[] = [];
  plan.estimated.forEach((e, i) => {
    const value = values[i];
    // Delta method: SE(value) = |d value / d coordinate| · SE(coordinate).
    const se = natural ? Math.abs(params.slope(i, value)) * Math.sqrt(Math.max(0, natural[i * k + i])) : null;
    rse.push(se === null ? null : se / value);
    const lo = new Float64Array(k);
    const hi = new Float64Array(k);
    lo[i] = params.lower[i];
    hi[i] = params.upper[i];
    const bound = (p: Float64Array) => {
      if (params.map) params.setEffects(p);
      return params.value(i, p);
    };
    const bounds: [number, number] = [bound(lo), bound(hi)];
    estimates[e.label] = { value, standardError: se, relativeStandardError: se === null ? null : se / value, unit: unitOf(plan, i, template), typical: params.base[i], bounds, path: e.slot.path };
  });
  if (params.map) params.setEffects(x);
  const correlation = natural ? { names: labels, matrix: labels.map((_, i) => labels.map((_, j) => natural[i * k + j] / Math.sqrt(natural[i * k + i] * natural[j * k + j]))) } : null;
  const ident = identifiability(a, labels, rse, (v) => params.relativeDirection(v, values));

  // Predictions at every level, the weights those of the last pass.
  const predicted = new Float64Array(template.observations.length);
  predictor.predict(x, predicted);
  const usedIndex = new Map(plan.usable.map((o, i) => [template.observations.indexOf(o), i]));
  const censoredIndex = new Set(plan.censored.map((o) => template.observations.indexOf(o)));
  const predictions: FitPrediction[] = template.observations.map((o, i) => {
    const used = usedIndex.get(i);
    const residual = used === undefined || o.concentration === null ? null : o.concentration - predicted[i];
    return {
      path: o.path, time: o.time, compartment: o.compartment, label: o.label, observed: o.concentration,
      predicted: predicted[i], residual, weightedResidual: residual === null || used === undefined ? null : problem.roots[used] * residual,
      used: used !== undefined || censoredIndex.has(i), censored: censoredIndex.has(i), limit: o.limit,
    };
  });
  if (plan.excluded.length > 0) notes.push(`left out of the fit: ${plan.excluded.map((o) => `${o.path} (${o.belowLimit ? 'below the limit' : 'no value'})`).join(', ')}; a level below the limit is excluded (fit.belowLimit "censored" counts it by the probability of a level below the limit)`);
  if (plan.censored.length > 0) notes.push(`counted as censored, by the probability of a level below the limit at the prediction: ${plan.censored.map((o) => o.path).join(', ')}`);
  if (params.map && plan.others.length > 0) notes.push(`not estimated, at their conditional mean given the estimated ones (typical when uncorrelated): ${plan.others.join(', ')}`);
  if (starts > 1) notes.push(`the run from the typical values did not converge; ${starts} starts were tried (×/÷ 2 on each quantity) and the best kept`);

  const evaluations = predictor.evaluations;
  const curves = options.band === false ? [] : predictedCurves(predictor, template, x, covariance);
  const converged = outcome.converged;
  const stopped = `${converged ? 'Converged' : 'Did not converge'} after ${iterations} iteration${iterations === 1 ? '' : 's'} and ${evaluations} model evaluations: ${reasonWords[outcome.reason]}; gradient norm ${outcome.gradientNorm.toExponential(2)}.`;
  const message = ident.lines.length > 0 ? `${stopped} ${ident.lines.map(sentence).join('. ')}.` : `${stopped} Every estimated quantity is identified by the levels.`;
  const fitted = fittedScenario(s, input, plan, params, estimates);
  return {
    ok: true,
    value: {
      settings: { objective: plan.objective, weighting: plan.objective === 'map' ? 'residual' : plan.weighting, estimate: labels },
      estimates, correlation, objective: outcome.cost, converged, iterations, evaluations,
      stopReason: outcome.reason, gradientNorm: outcome.gradientNorm, message, identifiability: ident.lines, conditionNumber: ident.condition,
      predictions, curves,
      units: { time: template.units.time, concentration: displayUnit('concentration', template.units) },
      fittedScenario: fitted, notes,
    },
  };
}

