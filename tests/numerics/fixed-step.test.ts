/**
 * Fixed-step methods: observed order from step halving against exact solutions, exact
 * landing on t1, evaluation counts, and the Hermite dense output they record.
 */
import { describe, expect, it } from 'vitest';
import { DenseStore } from '../../models/solving/numerics/dense-store';
import { emptyStats, IntegrationFailure } from '../../models/solving/numerics/ode-system';
import type { OdeSystem } from '../../models/solving/numerics/ode-system';
import { integrateFixed } from '../../models/solving/numerics/explicit-rk';
import { integrateAbm2 } from '../../models/solving/numerics/adams-bashforth-moulton';
import { EULER, HEUN, RK4 } from '../../models/solving/numerics/tableaux';
import type { ExplicitTableau } from '../../models/solving/numerics/tableau';
import { blowUp, decay, guarded, maxAbsDiff, twoState, twoStateExact } from './test-problems';

type Runner = (system: OdeSystem, t1: number, y: Float64Array, h: number) => void;

/** A step budget no test here comes near (tests/numerics/fixed-step-limits.test.ts tests the budget). */
const BUDGET = 1e9;

const fixed =
  (tab: ExplicitTableau): Runner =>
  (system, t1, y, h) =>
    integrateFixed(system, 0, t1, y, tab, h, new DenseStore(system.dimension), emptyStats(), BUDGET);
const abm2: Runner = (system, t1, y, h) => integrateAbm2(system, 0, t1, y, h, new DenseStore(system.dimension), emptyStats(), BUDGET);

const METHODS: readonly [string, Runner, number][] = [
  ['euler', fixed(EULER), 1],
  ['heun', fixed(HEUN), 2],
  ['rk4', fixed(RK4), 4],
  ['abm2', abm2, 2],
];

/** Global error at t = 1 with N steps. */
function errorDecay(run: Runner, steps: number): number {
  const y = Float64Array.of(1);
  run(decay, 1, y, 1 / steps);
  return Math.abs(y[0] - Math.exp(-1)); // exact solution y = e^{−t}
}

function errorTwoState(run: Runner, steps: number): number {
  const y = Float64Array.of(1, 0);
  run(twoState, 1, y, 1 / steps);
  return maxAbsDiff(y, twoStateExact(1, 1, 0)); // exact: eigen-decomposition, λ = −1, −3
}

describe.each(METHODS)('%s', (_name, run, order) => {
  // Global error C·h^p + O(h^{p+1}): at h = 1/40 → 1/80 the next term shifts log2 of the
  // ratio by O(h) ≈ 0.03, well inside ±0.15.
  it(`converges with order ${order} on y' = −y`, () => {
    const observed = Math.log2(errorDecay(run, 40) / errorDecay(run, 80));
    expect(Math.abs(observed - order)).toBeLessThan(0.15);
  });

  it(`converges with order ${order} on a two-state linear system`, () => {
    const observed = Math.log2(errorTwoState(run, 40) / errorTwoState(run, 80));
    expect(Math.abs(observed - order)).toBeLessThan(0.15);
  });

  it('lands exactly on t1 with a shortened last step and never samples f past it', () => {
    const t1 = 0.1 + 0.2; // not a multiple of h, and not exactly 0.3 in binary
    const y = Float64Array.of(1);
    const store = new DenseStore(1);
    const stats = emptyStats();
    if (run === abm2) integrateAbm2(guarded(decay, 0, t1), 0, t1, y, 0.07, store, stats, BUDGET);
    else integrateFixed(guarded(decay, 0, t1), 0, t1, y, order === 1 ? EULER : order === 2 ? HEUN : RK4, 0.07, store, stats, BUDGET);
    expect(store.end).toBe(t1);
    expect(stats.acceptedSteps).toBe(5); // 4 × 0.07 then 0.02
    const knots = store.knots();
    expect(knots[knots.length - 2]).toBeCloseTo(0.28, 14);
    // Exact e^{−t}; the shortened step adds no error beyond the method's h^p.
    expect(Math.abs(y[0] - Math.exp(-t1))).toBeLessThan(0.07 ** order);
  });
});

describe('fixed-step evaluation counts', () => {
  it('RK4 costs 4 evaluations per step: 3 new stages and the end slope reused as the next first stage', () => {
    const stats = emptyStats();
    integrateFixed(decay, 0, 1, Float64Array.of(1), RK4, 0.1, new DenseStore(1), stats, BUDGET);
    expect(stats.acceptedSteps).toBe(10);
    expect(stats.derivativeEvaluations).toBe(1 + 4 * 10);
  });

  it('ABM2 costs 2 evaluations per step (PECE) after the initial slope, Heun start included', () => {
    const stats = emptyStats();
    integrateAbm2(twoState, 0, 1, Float64Array.of(1, 0), 0.1, new DenseStore(2), stats, BUDGET);
    expect(stats.acceptedSteps).toBe(10);
    expect(stats.derivativeEvaluations).toBe(1 + 2 * 10);
    const short = emptyStats();
    integrateAbm2(twoState, 0, 1, Float64Array.of(1, 0), 0.3, new DenseStore(2), short, BUDGET);
    expect(short.acceptedSteps).toBe(4); // 0.3, 0.3, 0.3, 0.1
    expect(short.derivativeEvaluations).toBe(1 + 2 * 4);
  });

  it('ABM2 reuses f_n, f_{n−1}: evaluations happen only at new times', () => {
    const times: number[] = [];
    const spy: OdeSystem = {
      dimension: 1,
      derivative(t, y, out) {
        times.push(t);
        decay.derivative(t, y, out);
      },
      jacobian: decay.jacobian,
    };
    integrateAbm2(spy, 0, 0.4, Float64Array.of(1), 0.1, new DenseStore(1), emptyStats(), BUDGET);
    // t0 once, then each new grid time twice (predicted, corrected).
    const expected = [0, 0.1, 0.1, 0.2, 0.2, 0.30000000000000004, 0.30000000000000004, 0.4, 0.4];
    expect(times).toHaveLength(expected.length);
    times.forEach((t, i) => expect(t).toBeCloseTo(expected[i], 15));
  });
});

describe('ABM2 variable last step', () => {
  it('keeps second order when every step ends with a shortened one', () => {
    // h = 1/(N + 0.5): N full steps and a half step; the variable-step AB2 predictor keeps
    // the error C·h², so halving h still divides the error by ~4 (Hairer–Nørsett–Wanner I, §III.5).
    const err = (n: number): number => {
      const y = Float64Array.of(1);
      integrateAbm2(decay, 0, 1, y, 1 / (n + 0.5), new DenseStore(1), emptyStats(), BUDGET);
      return Math.abs(y[0] - Math.exp(-1));
    };
    const observed = Math.log2(err(40) / err(81));
    expect(Math.abs(observed - 2)).toBeLessThan(0.15);
  });
});

describe('ABM2 shortened step formula', () => {
  it('uses the variable-step AB2 predictor on the shortened last step', () => {
    // y' = −y, h = 0.1, t1 = 0.15, by hand:
    //   Heun:  y1 = 1 + 0.05·(−1 − 0.9) = 0.905
    //   ω = 0.05/0.1 = 0.5:  y* = 0.905 + 0.05·(1.25·(−0.905) − 0.25·(−1)) = 0.8609375
    //   trapezoid:  y2 = 0.905 + 0.025·(−0.905 − 0.8609375) = 0.8608515625
    // (the constant-step predictor 1.5 f_n − 0.5 f_{n−1} would give 0.86086…).
    const y = Float64Array.of(1);
    integrateAbm2(decay, 0, 0.15, y, 0.1, new DenseStore(1), emptyStats(), BUDGET);
    expect(y[0]).toBeCloseTo(0.8608515625, 14);
  });
});

describe('Hermite dense output of fixed-step methods', () => {
  it('interpolates RK4 between grid points to O(h^4)', () => {
    // Cubic Hermite interpolation error ≤ h⁴/384·max|y⁗| (Hairer–Nørsett–Wanner I, §II.6) plus the RK4 global error.
    const store = new DenseStore(1);
    const h = 0.1;
    integrateFixed(decay, 0, 1, Float64Array.of(1), RK4, h, store, emptyStats(), BUDGET);
    const out = new Float64Array(1);
    let worst = 0;
    for (let t = 0.005; t < 1; t += 0.01) {
      store.stateAt(t, 'left', out);
      worst = Math.max(worst, Math.abs(out[0] - Math.exp(-t)));
    }
    expect(worst).toBeLessThan(h ** 4 / 384 + 1e-6);
  });
});

describe('fixed-step failures', () => {
  it('throws IntegrationFailure naming component and time when the state becomes non-finite', () => {
    // Euler on y' = y² from y = 1 with h = 0.5: 1 → 1.5 → 2.625 → … overflows to ∞ in a few dozen steps.
    let failure: unknown = null;
    try {
      integrateFixed(blowUp, 0, 100, Float64Array.of(1), EULER, 0.5, new DenseStore(1), emptyStats(), BUDGET);
    } catch (e) {
      failure = e;
    }
    expect(failure).toBeInstanceOf(IntegrationFailure);
    const f = failure as IntegrationFailure;
    expect(f.reason).toBe('non-finite');
    expect(f.component).toBe(0);
    expect(f.time).toBeGreaterThan(0);
    expect(f.time).toBeLessThan(100);
    expect(f.message).toContain(`t = ${f.time}`);
  });

  it('rejects a non-positive step', () => {
    expect(() => integrateFixed(decay, 0, 1, Float64Array.of(1), RK4, 0, new DenseStore(1), emptyStats(), BUDGET)).toThrow(RangeError);
  });
});
