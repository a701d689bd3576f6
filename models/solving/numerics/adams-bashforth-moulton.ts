/**
 * Two-step Adams–Bashforth predictor with the trapezoidal (Adams–Moulton, 2nd order)
 * corrector in PECE mode, fixed step (Hairer–Nørsett–Wanner I, §III.1).
 *
 * Each call is one interval between discontinuities, so the two-step history is rebuilt
 * at every call: the first step is Heun's method, which is itself PECE with an Euler
 * predictor. Every step costs exactly two evaluations (at the predicted and at the
 * corrected value); f_n and f_{n−1} come from the history.
 *
 * The last step, shortened to land on t1, uses the variable-step AB2 predictor
 *   y* = y_n + h_n((1 + ω/2) f_n − (ω/2) f_{n−1}),  ω = h_n / h_{n−1},
 * which is second order for any ω and equals the constant-step formula when ω = 1, so all
 * steps go through the same code.
 *
 * Between steps: the quadratic through y_n, y_{n+1} with slope f_n at y_n (the first three
 * Hermite vectors), second order like the method; it is Heun's own continuous extension, and
 * stays non-negative where y_n, y_{n+1} and y_n + h·f_n/2 are, which for a compartment
 * emptied at rate k holds whenever hk ≤ 2, inside the method's stability interval.
 *
 * On y' = λy (z = hλ) a step is y_{n+1} = (1 + z + ¾z²) y_n − ¼z² y_{n−1}: the stability
 * polynomial of the PECE pair, whose real-axis limit is z = −2 (stability.ts).
 */
import { DenseStore, hermiteCoefficients } from './dense-store';
import { IntegrationFailure } from './ode-system';
import type { OdeSystem, SolverStats } from './ode-system';
import { checkFixedBudget, firstNonFinite } from './explicit-rk';
import { alternatingForm } from './tableau';

/** The dense form of ABM2 steps: the first three Hermite vectors, a quadratic. */
export const ABM2_FORM = alternatingForm(3);

function nonFinite(t: number, component: number): IntegrationFailure {
  return new IntegrationFailure('non-finite', t, component, `non-finite value in state component ${component} at t = ${t}`);
}

export function integrateAbm2(
  system: OdeSystem,
  t0: number,
  t1: number,
  y: Float64Array,
  h: number,
  store: DenseStore,
  stats: SolverStats,
  maxSteps: number,
): void {
  if (!(t1 >= t0)) throw new RangeError(`integration span must satisfy t0 ≤ t1 (got ${t0}, ${t1})`);
  if (!(h > 0) || !Number.isFinite(h)) throw new RangeError(`fixed step must be positive (got ${h})`);
  const span = t1 - t0;
  if (span === 0) return;
  const steps = checkFixedBudget(t0, t1, h, maxSteps, store, ABM2_FORM.vectors);
  const n = system.dimension;
  let yn = Float64Array.from(y);
  let yNext = new Float64Array(n);
  let fn = new Float64Array(n);
  let fPrev = new Float64Array(n);
  let fNext = new Float64Array(n);
  const yPred = new Float64Array(n);
  const fPred = new Float64Array(n);
  const coef = new Float64Array(ABM2_FORM.vectors * n);

  const bad0 = firstNonFinite(yn);
  if (bad0 >= 0) throw nonFinite(t0, bad0);
  system.derivative(t0, yn, fn);
  stats.derivativeEvaluations++;

  let hPrev = 0;
  for (let m = 0; m < steps; m++) {
    const t = t0 + m * h;
    const tNext = m === steps - 1 ? t1 : t0 + (m + 1) * h;
    const hStep = tNext - t;
    // P: Euler on the first step (no history yet), variable-step AB2 afterwards.
    if (m === 0) {
      for (let i = 0; i < n; i++) yPred[i] = yn[i] + hStep * fn[i];
    } else {
      const omega = hStep / hPrev;
      const wn = hStep * (1 + 0.5 * omega);
      const wp = -hStep * 0.5 * omega;
      for (let i = 0; i < n; i++) yPred[i] = yn[i] + wn * fn[i] + wp * fPrev[i];
    }
    // E
    system.derivative(tNext, yPred, fPred);
    stats.derivativeEvaluations++;
    // C: trapezoidal rule.
    const half = 0.5 * hStep;
    for (let i = 0; i < n; i++) yNext[i] = yn[i] + half * (fn[i] + fPred[i]);
    const bad = firstNonFinite(yNext);
    if (bad >= 0) throw nonFinite(tNext, bad);
    // E
    system.derivative(tNext, yNext, fNext);
    stats.derivativeEvaluations++;
    const badF = firstNonFinite(fNext);
    if (badF >= 0) throw nonFinite(tNext, badF);

    hermiteCoefficients(hStep, yn, fn, yNext, fNext, coef, ABM2_FORM.vectors);
    store.append(t, hStep, ABM2_FORM, coef);
    stats.acceptedSteps++;

    // Rotate the history without allocating.
    const ySwap = yn;
    yn = yNext;
    yNext = ySwap;
    const fSwap = fPrev;
    fPrev = fn;
    fn = fNext;
    fNext = fSwap;
    hPrev = hStep;
  }
  y.set(yn);
}
