/**
 * Adaptive explicit pairs (DOPRI5, DOP853): order with the step held fixed, tolerance
 * proportionality, dense output, landing on t1, FSAL evaluation counts, failures.
 */
import { describe, expect, it } from 'vitest';
import { DenseStore } from '../../models/solving/numerics/dense-store';
import { emptyStats, IntegrationFailure } from '../../models/solving/numerics/ode-system';
import type { OdeSystem } from '../../models/solving/numerics/ode-system';
import { integrateAdaptive } from '../../models/solving/numerics/explicit-rk';
import type { AdaptiveOptions } from '../../models/solving/numerics/explicit-rk';
import { DOP853, DOPRI5 } from '../../models/solving/numerics/tableaux';
import type { ExplicitTableau } from '../../models/solving/numerics/tableau';
import { blowUp, decay, guarded, maxAbsDiff, oscillator } from './test-problems';

/** Tolerances so loose that every step is accepted: with initialStep = maxStep = h the pair runs at fixed h. */
const fixedH = (h: number): AdaptiveOptions => ({ rtol: 1, atol: 1, maxSteps: 1e6, initialStep: h, maxStep: h });

function run(system: OdeSystem, t1: number, y0: number[], tab: ExplicitTableau, options: AdaptiveOptions) {
  const y = Float64Array.from(y0);
  const store = new DenseStore(system.dimension);
  const stats = emptyStats();
  const result = integrateAdaptive(system, 0, t1, y, tab, options, store, stats);
  return { y, store, stats, result };
}

const oscillatorExact = (t: number): number[] => [Math.cos(t), -Math.sin(t)]; // y'' = −y, y(0) = 1, y'(0) = 0

describe.each([
  ['dopri5', DOPRI5, 0.2],
  ['dop853', DOP853, 1],
] as const)('%s', (_name, tab, h0) => {
  it(`converges with order ${tab.order} at a fixed step`, () => {
    // Oscillator over [0, 10], exact solution (cos t, −sin t). Errors stay ≥ 1e-11, far above rounding.
    const err = (h: number) => maxAbsDiff(run(oscillator, 10, [1, 0], tab, fixedH(h)).y, oscillatorExact(10));
    const observed = Math.log2(err(h0 / 2) / err(h0 / 4));
    expect(Math.abs(observed - tab.order)).toBeLessThan(0.15);
  });

  it.each([1e-4, 1e-7, 1e-10])('keeps the global error within 10·tol at rtol = atol = %s', (tol) => {
    // The controller bounds the local error per step by tol (Hairer–Nørsett–Wanner I, §II.4); on y' = −y
    // errors are damped and on the oscillator they add up linearly — observed ≤ 3·tol for both pairs.
    const osc = run(oscillator, 10, [1, 0], tab, { rtol: tol, atol: tol, maxSteps: 1e5 });
    expect(maxAbsDiff(osc.y, oscillatorExact(10))).toBeLessThan(10 * tol);
    const dec = run(decay, 5, [1], tab, { rtol: tol, atol: tol * 1e-3, maxSteps: 1e5 });
    expect(Math.abs(dec.y[0] / Math.exp(-5) - 1)).toBeLessThan(10 * tol); // relative, exact e^{−5}
  });

  it('spends more steps at tighter tolerance, in proportion tol^(−1/order)', () => {
    const steps = (tol: number) => run(oscillator, 10, [1, 0], tab, { rtol: tol, atol: tol, maxSteps: 1e5 }).stats.acceptedSteps;
    // Step size ∝ tol^{1/(q+1)} (q = order of the estimate's error term); over 4 decades this
    // predicts a ratio 10^{4/order}: ~6.3 for order 5, ~3.2 for order 8. Allow a factor 2 either way.
    const ratio = steps(1e-10) / steps(1e-6);
    const predicted = 10 ** (4 / tab.order);
    expect(ratio).toBeGreaterThan(predicted / 2);
    expect(ratio).toBeLessThan(predicted * 2);
  });

  it('stores a dense output accurate to the tolerance between steps', () => {
    const tol = 1e-8;
    const { store } = run(oscillator, 10, [1, 0], tab, { rtol: tol, atol: tol, maxSteps: 1e5 });
    const out = new Float64Array(2);
    let worst = 0;
    for (let t = 0.013; t < 10; t += 0.0517) {
      store.stateAt(t, 'left', out);
      worst = Math.max(worst, maxAbsDiff(out, oscillatorExact(t)));
    }
    // The interpolant's own error is of the order of the local error (≤ tol per step); plus the global error (≤ 3·tol above).
    expect(worst).toBeLessThan(10 * tol);
  });

  it('has a continuous extension whose error over one step shrinks like h^(dense order + 1)', () => {
    // DOPRI5's extension is of order 4 and DOP853's of order 7 (Hairer–Nørsett–Wanner I, §II.6):
    // the mid-step error of one step behaves as C·h^{5} and C·h^{8}.
    const denseOrder = tab === DOPRI5 ? 4 : 7;
    const midError = (h: number) => {
      const { store } = run(oscillator, h, [1, 0], tab, fixedH(h));
      expect(store.steps).toBe(1);
      const out = new Float64Array(2);
      store.stateAt(0.37 * h, 'left', out);
      return maxAbsDiff(out, oscillatorExact(0.37 * h));
    };
    const base = tab === DOPRI5 ? 0.4 : 1.6;
    const observed = Math.log2(midError(base) / midError(base / 2));
    expect(Math.abs(observed - (denseOrder + 1))).toBeLessThan(0.3);
  });

  it('lands exactly on t1, never evaluating f beyond it, and returns y(t1)', () => {
    const t1 = 0.7 + 0.1; // 0.7999999999999999: an inexact end time
    const { y, store } = run(guarded(oscillator, 0, t1), t1, [1, 0], tab, { rtol: 1e-6, atol: 1e-6, maxSteps: 1e4 });
    expect(store.end).toBe(t1);
    expect(maxAbsDiff(y, oscillatorExact(t1))).toBeLessThan(1e-5);
    const last = new Float64Array(2);
    store.stateAt(t1, 'left', last);
    expect(maxAbsDiff(last, y)).toBeLessThan(1e-15);
  });

  it('counts evaluations with the first-same-as-last slope reused', () => {
    const { stats } = run(oscillator, 10, [1, 0], tab, { rtol: 1e-6, atol: 1e-6, maxSteps: 1e4, initialStep: 0.05 });
    const attempts = stats.acceptedSteps + stats.rejectedSteps;
    // DOPRI5: 6 new stages per attempt (stage 7 is the next stage 1). DOP853 (dop853.f): 11 new stages
    // per attempt, plus f(x+h, y1), 3 dense stages and the defect check at mid-step for every step
    // that passes the error test (accepted, or then rejected by the defect check). Plus f(t0, y0) once.
    const passed = stats.acceptedSteps + stats.denseRejections;
    const expected = tab === DOPRI5 ? 1 + 6 * attempts : 1 + 11 * attempts + 5 * passed;
    expect(stats.derivativeEvaluations).toBe(expected);
  });
});

describe('adaptive failures', () => {
  it("reports the blow-up of y' = y² near t = 1 as an IntegrationFailure with its time", () => {
    let failure: unknown = null;
    try {
      run(blowUp, 2, [1], DOPRI5, { rtol: 1e-6, atol: 1e-9, maxSteps: 1e5 });
    } catch (e) {
      failure = e;
    }
    expect(failure).toBeInstanceOf(IntegrationFailure);
    const f = failure as IntegrationFailure;
    // Exact solution 1/(1 − t) has its pole at t = 1; the step collapses there.
    expect(['step-size-underflow', 'non-finite']).toContain(f.reason);
    expect(Math.abs(f.time - 1)).toBeLessThan(1e-3);
    expect(f.message).toContain(String(f.time));
  });

  it('stops with too-many-steps when maxSteps is exhausted', () => {
    let failure: unknown = null;
    try {
      run(oscillator, 100, [1, 0], DOPRI5, { rtol: 1e-10, atol: 1e-10, maxSteps: 50 });
    } catch (e) {
      failure = e;
    }
    expect(failure).toBeInstanceOf(IntegrationFailure);
    expect((failure as IntegrationFailure).reason).toBe('too-many-steps');
    expect((failure as IntegrationFailure).time).toBeGreaterThan(0);
    expect((failure as IntegrationFailure).time).toBeLessThan(100);
  });

  it('names the first non-finite component when the derivative itself is not finite', () => {
    const broken: OdeSystem = {
      dimension: 3,
      derivative(_t, y, out) {
        out[0] = -y[0];
        out[1] = Math.log(y[1] - 1); // y[1] = 1 → −∞
        out[2] = 0;
      },
      jacobian(_t, _y, out) {
        out.fill(0);
      },
    };
    let failure: unknown = null;
    try {
      run(broken, 1, [1, 1, 0], DOPRI5, { rtol: 1e-6, atol: 1e-6, maxSteps: 100 });
    } catch (e) {
      failure = e;
    }
    expect(failure).toBeInstanceOf(IntegrationFailure);
    expect((failure as IntegrationFailure).reason).toBe('non-finite');
    expect((failure as IntegrationFailure).component).toBe(1);
    expect((failure as IntegrationFailure).time).toBe(0);
  });
});
