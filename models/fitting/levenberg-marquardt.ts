/**
 * Levenberg–Marquardt on a residual vector r(x), minimising ‖r‖² within box bounds by
 * projection. Scaling by the largest diagonal of JᵀJ seen so far (Moré, "The Levenberg–Marquardt
 * algorithm: implementation and theory", LNM 630, 1978); damping updated by the gain ratio
 * (Nielsen, "Damping parameter in Marquardt's method", IMM-REP-1999-05). The Jacobian is taken by
 * central differences (see `jacobian`).
 */
import { choleskyOf, choleskySolve, normalMatrix } from './dense.ts';

export interface LeastSquares {
  /** Number of residuals and of unknowns. */
  residualCount: number;
  unknowns: number;
  lower: Float64Array;
  upper: Float64Array;
  /** Writes r(x); false when the model cannot be evaluated there (the step is then refused). */
  residuals(x: Float64Array, out: Float64Array): boolean;
  /** Step of the difference quotients at x_j. */
  stepAt(x: number): number;
}

export type StopReason = 'objective' | 'gradient' | 'step' | 'iterations' | 'failed';

export interface LeastSquaresOutcome {
  x: Float64Array;
  /** ‖r‖² at x. */
  cost: number;
  residuals: Float64Array;
  /** J at x (residualCount × unknowns, row-major). */
  jacobian: Float64Array;
  iterations: number;
  converged: boolean;
  reason: StopReason;
  /** Largest |component| of the projected gradient Jᵀr (of ½‖r‖²). */
  gradientNorm: number;
}

export interface LmOptions {
  maxIterations: number;
  /** Relative decrease of the objective on an accepted step below which it has settled. */
  objectiveTolerance: number;
  /** The projected gradient, relative to 1 + cost, below which x is stationary. */
  gradientTolerance: number;
}

export const defaultLmOptions: LmOptions = { maxIterations: 200, objectiveTolerance: 1e-12, gradientTolerance: 1e-9 };

function sumOfSquares(r: Float64Array): number {
  let s = 0;
  for (let i = 0; i < r.length; i++) s += r[i] * r[i];
  return s;
}

/**
 * Central differences (r(x + h e_j) − r(x − h e_j)) / 2h, one-sided at a bound. The error of the
 * central quotient is O(h²·r''') + O(noise/h): with h = ε^(1/3)·max(1, |x|) ≈ 6e-6 both terms are
 * about ε^(2/3) ≈ 4e-11 relative when r is smooth to rounding (the exact path; Nocedal & Wright,
 * Numerical Optimization, 2nd ed., §8.1). Returns false when r cannot be evaluated near x.
 */
export function jacobian(problem: LeastSquares, x: Float64Array, r0: Float64Array, out: Float64Array): boolean {
  const { residualCount: n, unknowns: p } = problem;
  const probe = Float64Array.from(x);
  const plus = new Float64Array(n);
  const minus = new Float64Array(n);
  for (let j = 0; j < p; j++) {
    const h = problem.stepAt(x[j]);
    const up = Math.min(x[j] + h, problem.upper[j]);
    const down = Math.max(x[j] - h, problem.lower[j]);
    probe[j] = up;
    let ok = up === x[j] ? (plus.set(r0), true) : problem.residuals(probe, plus);
    probe[j] = down;
    ok = ok && (down === x[j] ? (minus.set(r0), true) : problem.residuals(probe, minus));
    probe[j] = x[j];
    if (!ok || up === down) return false;
    const width = up - down;
    for (let i = 0; i < n; i++) out[i * p + j] = (plus[i] - minus[i]) / width;
  }
  return true;
}

/** g = Jᵀr, and its largest component not pointing out of an active bound. */
function projectedGradient(j: Float64Array, r: Float64Array, x: Float64Array, problem: LeastSquares, g: Float64Array): number {
  const { residualCount: n, unknowns: p } = problem;
  g.fill(0);
  for (let i = 0; i < n; i++) for (let k = 0; k < p; k++) g[k] += j[i * p + k] * r[i];
  let norm = 0;
  for (let k = 0; k < p; k++) {
    // At the lower bound only a descent direction inward (g < 0 means increasing x lowers the cost) counts.
    const blocked = (x[k] <= problem.lower[k] && g[k] > 0) || (x[k] >= problem.upper[k] && g[k] < 0);
    if (!blocked) norm = Math.max(norm, Math.abs(g[k]));
  }
  return norm;
}

export function levenbergMarquardt(problem: LeastSquares, start: Float64Array, options: LmOptions = defaultLmOptions): LeastSquaresOutcome {
  const { residualCount: n, unknowns: p } = problem;
  let x = Float64Array.from(start);
  let r = new Float64Array(n);
  let j = new Float64Array(n * p);
  const g = new Float64Array(p);
  const scale = new Float64Array(p);
  const step = new Float64Array(p);
  const trial = new Float64Array(p);
  let rTrial = new Float64Array(n);
  const fail = (iterations: number): LeastSquaresOutcome => ({ x, cost: Infinity, residuals: r, jacobian: j, iterations, converged: false, reason: 'failed', gradientNorm: Infinity });
  if (!problem.residuals(x, r) || !jacobian(problem, x, r, j)) return fail(0);
  let cost = sumOfSquares(r);
  let a = normalMatrix(j, n, p);
  let gradientNorm = projectedGradient(j, r, x, problem, g);
  for (let k = 0; k < p; k++) scale[k] = Math.max(a[k * p + k], 1e-300);
  let mu = 1e-3;
  let nu = 2;
  const damped = new Float64Array(p * p);
  for (let iteration = 1; iteration <= options.maxIterations; iteration++) {
    if (gradientNorm <= options.gradientTolerance * (1 + cost)) return { x, cost, residuals: r, jacobian: j, iterations: iteration - 1, converged: true, reason: 'gradient', gradientNorm };
    // (JᵀJ + μ·D) s = −Jᵀr with D the running maximum of diag(JᵀJ) (Moré's scaling).
    damped.set(a);
    for (let k = 0; k < p; k++) damped[k * p + k] += mu * scale[k];
    const l = choleskyOf(damped, p);
    if (!l) {
      mu *= nu;
      nu *= 2;
      continue;
    }
    for (let k = 0; k < p; k++) step[k] = -g[k];
    choleskySolve(l, p, step);
    let moved = 0;
    for (let k = 0; k < p; k++) {
      trial[k] = Math.min(problem.upper[k], Math.max(problem.lower[k], x[k] + step[k]));
      step[k] = trial[k] - x[k];
      moved = Math.max(moved, Math.abs(step[k]) / (1e-10 + Math.abs(x[k])));
    }
    if (moved < 1e-14) return { x, cost, residuals: r, jacobian: j, iterations: iteration, converged: gradientNorm <= 1e-5 * (1 + cost), reason: 'step', gradientNorm };
    // Predicted decrease of ‖r‖² by the linear model for the projected step: −(2gᵀs + sᵀAs).
    let gs = 0;
    let sas = 0;
    for (let x1 = 0; x1 < p; x1++) {
      gs += g[x1] * step[x1];
      for (let y = 0; y < p; y++) sas += step[x1] * a[x1 * p + y] * step[y];
    }
    const predicted = -(2 * gs + sas);
    const ok = problem.residuals(trial, rTrial);
    const trialCost = ok ? sumOfSquares(rTrial) : Infinity;
    const rho = predicted > 0 ? (cost - trialCost) / predicted : -1;
    if (ok && Number.isFinite(trialCost) && trialCost < cost && rho > 0) {
      const settled = (cost - trialCost) <= options.objectiveTolerance * (cost + 1e-300);
      const jTrial = new Float64Array(n * p);
      if (!jacobian(problem, trial, rTrial, jTrial)) return fail(iteration);
      x = Float64Array.from(trial);
      [r, rTrial] = [rTrial, r];
      j = jTrial;
      cost = trialCost;
      a = normalMatrix(j, n, p);
      for (let k = 0; k < p; k++) scale[k] = Math.max(scale[k], a[k * p + k]);
      gradientNorm = projectedGradient(j, r, x, problem, g);
      mu *= Math.max(1 / 3, 1 - Math.pow(2 * rho - 1, 3));
      nu = 2;
      if (settled) return { x, cost, residuals: r, jacobian: j, iterations: iteration, converged: true, reason: 'objective', gradientNorm };
    } else {
      mu *= nu;
      nu *= 2;
      if (!Number.isFinite(mu) || mu > 1e30) return { x, cost, residuals: r, jacobian: j, iterations: iteration, converged: gradientNorm <= 1e-5 * (1 + cost), reason: 'step', gradientNorm };
    }
  }
  return { x, cost, residuals: r, jacobian: j, iterations: options.maxIterations, converged: false, reason: 'iterations', gradientNorm };
}
