/**
 * The Rosenbrock method (RODAS4) and the automatic explicit → stiff hand-over.
 */
import { describe, expect, it } from 'vitest';
import { DenseStore } from '../../models/solving/numerics/dense-store';
import { emptyStats, IntegrationFailure } from '../../models/solving/numerics/ode-system';
import type { OdeSystem } from '../../models/solving/numerics/ode-system';
import { integrateRosenbrock } from '../../models/solving/numerics/rosenbrock';
import type { RosenbrockOptions } from '../../models/solving/numerics/rosenbrock';
import { createIntegratorState, HIGH_ORDER_RTOL, integrateSegment } from '../../models/solving/numerics/auto-integrator';
import type { MethodName, SegmentSettings } from '../../models/solving/numerics/auto-integrator';
import {
  blowUp,
  decay,
  guarded,
  linearSystem,
  maxAbsDiff,
  oscillator,
  protheroRobinson,
  stiffPair,
  stiffPairExact,
} from './test-problems';

function rosenbrock(system: OdeSystem, t1: number, y0: number[], options: RosenbrockOptions) {
  const y = Float64Array.from(y0);
  const store = new DenseStore(system.dimension);
  const stats = emptyStats();
  const result = integrateRosenbrock(system, 0, t1, y, options, store, stats);
  return { y, store, stats, result };
}

const fixedH = (h: number): RosenbrockOptions => ({ rtol: 1, atol: 1, maxSteps: 1e6, initialStep: h, maxStep: h });

describe('RODAS4', () => {
  it('converges with order 4 at a fixed step (oscillator, exact (cos t, −sin t))', () => {
    const err = (h: number) => maxAbsDiff(rosenbrock(oscillator, 2, [1, 0], fixedH(h)).y, [Math.cos(2), -Math.sin(2)]);
    const observed = Math.log2(err(0.1) / err(0.05));
    expect(Math.abs(observed - 4)).toBeLessThan(0.15);
  });

  it('has a dense output of order 3: one-step mid-point error ∝ h^4', () => {
    // Hairer–Wanner II, §VI.4: RODAS's continuous extension is of order 3, so its local error is C·h^4.
    const mid = (h: number) => {
      const { store } = rosenbrock(oscillator, h, [1, 0], fixedH(h));
      const out = new Float64Array(2);
      store.stateAt(0.37 * h, 'left', out);
      return maxAbsDiff(out, [Math.cos(0.37 * h), -Math.sin(0.37 * h)]);
    };
    const observed = Math.log2(mid(0.05) / mid(0.025));
    expect(Math.abs(observed - 4)).toBeLessThan(0.15);
  });

  it("is L-stable: one step on y' = λy damps like 1/|λ| as λ → −∞", () => {
    // R(z) → 0 as z → −∞ for a stiffly accurate method (Hairer–Wanner II, §IV.3); an A-stable but not
    // L-stable method (trapezoidal rule) would keep |R| → 1.
    const oneStep = (lambda: number) => rosenbrock(linearSystem([[lambda]]), 1, [1], fixedH(1)).y[0];
    const r6 = Math.abs(oneStep(-1e6));
    const r8 = Math.abs(oneStep(-1e8));
    expect(r6).toBeLessThan(1e-4);
    expect(r8).toBeLessThan(r6 / 50);
  });

  it.each([1e-4, 1e-6])('solves the Prothero–Robinson problem (exact y = cos t) within 10·tol at tol = %s', (tol) => {
    const { y, stats } = rosenbrock(protheroRobinson, 2, [1], { rtol: tol, atol: tol, maxSteps: 1e4 });
    expect(Math.abs(y[0] - Math.cos(2))).toBeLessThan(10 * tol);
    // λ = −10⁴ over [0, 2]: an explicit method would need ≥ 2·10⁴/3.3 ≈ 6000 steps.
    expect(stats.acceptedSteps).toBeLessThan(200);
  });

  it('solves the stiff pair (λ = −1, −10⁴) to tolerance and counts Jacobians and factorisations', () => {
    const { y, stats } = rosenbrock(stiffPair, 10, [2, 0], { rtol: 1e-6, atol: 1e-9, maxSteps: 1e4 });
    const exact = stiffPairExact(10, 2, 0); // eigen-decomposition
    expect(maxAbsDiff(y, exact)).toBeLessThan(10 * (1e-9 + 1e-6 * exact[0]));
    expect(stats.jacobianEvaluations).toBe(stats.acceptedSteps); // one per accepted step, kept on rejection
    expect(stats.factorizations).toBe(stats.acceptedSteps + stats.rejectedSteps); // one per attempted step size
  });

  it('lands exactly on t1 without sampling f or J outside [t0, t1]', () => {
    const t1 = 0.1 + 0.2;
    const { y, store } = rosenbrock(guarded(protheroRobinson, 0, t1), t1, [1], { rtol: 1e-6, atol: 1e-6, maxSteps: 1e4 });
    expect(store.end).toBe(t1);
    expect(Math.abs(y[0] - Math.cos(t1))).toBeLessThan(1e-5);
  });

  it('reports a blow-up as an IntegrationFailure near t = 1', () => {
    let failure: unknown = null;
    try {
      rosenbrock(blowUp, 2, [1], { rtol: 1e-6, atol: 1e-9, maxSteps: 1e5 });
    } catch (e) {
      failure = e;
    }
    expect(failure).toBeInstanceOf(IntegrationFailure);
    expect(['step-size-underflow', 'non-finite']).toContain((failure as IntegrationFailure).reason);
    expect(Math.abs((failure as IntegrationFailure).time - 1)).toBeLessThan(1e-3); // pole of 1/(1 − t)
  });
});

function segment(system: OdeSystem, t1: number, y0: number[], settings: SegmentSettings) {
  const y = Float64Array.from(y0);
  const store = new DenseStore(system.dimension);
  const stats = emptyStats();
  const state = createIntegratorState();
  const result = integrateSegment(system, 0, t1, y, settings, store, stats, state);
  return { y, store, stats, state, result };
}

describe('automatic method selection', () => {
  // rtol 1e-5: above HIGH_ORDER_RTOL, so 'auto' starts with DOPRI5.
  const settings = (method: MethodName): SegmentSettings => ({ method, rtol: 1e-5, atol: 1e-9, maxSteps: 1e6 });

  it('switches to Rosenbrock on the stiff pair and uses far fewer steps than DOPRI5 alone', () => {
    const exact = stiffPairExact(10, 2, 0); // eigen-decomposition, λ = −1, −10⁴
    const auto = segment(stiffPair, 10, [2, 0], settings('auto'));
    const explicit = segment(stiffPair, 10, [2, 0], settings('dopri5'));
    expect(auto.result.methods).toEqual(['dopri5', 'rosenbrock']);
    expect(auto.stats.stiffSwitches).toBe(1);
    expect(auto.state.switches).toBe(1);
    expect(auto.state.stiff).toBe(true);
    // DOPRI5 is held at h ≈ 3.3/10⁴ by stability: ≈ 3·10⁴ steps over [0, 10].
    expect(explicit.stats.acceptedSteps).toBeGreaterThan(20000);
    expect(auto.stats.acceptedSteps * 50).toBeLessThan(explicit.stats.acceptedSteps);
    for (const r of [auto, explicit]) expect(maxAbsDiff(r.y, exact)).toBeLessThan(10 * (1e-9 + 1e-5 * exact[0]));
    expect(auto.store.end).toBe(10);
  });

  it(`stays explicit on a non-stiff problem and picks DOP853 at rtol ≤ ${HIGH_ORDER_RTOL}`, () => {
    const loose = segment(oscillator, 10, [1, 0], settings('auto'));
    expect(loose.result.methods).toEqual(['dopri5']);
    expect(loose.stats.stiffSwitches).toBe(0);
    for (const rtol of [HIGH_ORDER_RTOL, 1e-9]) {
      const tight = segment(oscillator, 10, [1, 0], { method: 'auto', rtol, atol: rtol * 1e-3, maxSteps: 1e6 });
      expect(tight.result.methods).toEqual(['dop853']);
      expect(maxAbsDiff(tight.y, [Math.cos(10), -Math.sin(10)])).toBeLessThan(10 * rtol);
    }
  });

  it('hands over from DOP853 to Rosenbrock as well', () => {
    const exact = stiffPairExact(10, 2, 0);
    const auto = segment(stiffPair, 10, [2, 0], { method: 'auto', rtol: 1e-7, atol: 1e-10, maxSteps: 1e6 });
    expect(auto.result.methods).toEqual(['dop853', 'rosenbrock']);
    expect(auto.stats.stiffSwitches).toBe(1);
    expect(maxAbsDiff(auto.y, exact)).toBeLessThan(10 * (1e-10 + 1e-7 * exact[0]));
  });

  it('tries the explicit pair again on the next segment and carries step hints', () => {
    const y = Float64Array.of(2, 0);
    const store = new DenseStore(2);
    const stats = emptyStats();
    const state = createIntegratorState();
    const first = integrateSegment(stiffPair, 0, 5, y, settings('auto'), store, stats, state);
    expect(first.methods).toEqual(['dopri5', 'rosenbrock']);
    expect(state.stiffStep).not.toBeNull();
    // A "dose" re-excites the fast mode; the next segment starts explicit again.
    y[0] += 1;
    const second = integrateSegment(stiffPair, 5, 10, y, settings('auto'), store, stats, state);
    // The kicked fast mode decays within the first explicit steps, after which stiffness is detected again.
    expect(second.methods).toEqual(['dopri5', 'rosenbrock']);
    expect(state.switches).toBe(2);
    expect(stats.stiffSwitches).toBe(2);
    expect(store.end).toBe(10);
    // Exact: superpose the solution from 0 and the jump (1, 0) at t = 5.
    const base = stiffPairExact(10, 2, 0);
    const kick = stiffPairExact(5, 1, 0);
    expect(maxAbsDiff(y, [base[0] + kick[0], base[1] + kick[1]])).toBeLessThan(1e-5);
  });

  it.each(['euler', 'heun', 'rk4', 'abm2'] as const)('runs fixed-step %s with settings.step and requires it', (method) => {
    const r = segment(decay, 1, [1], { method, rtol: 1e-6, atol: 1e-9, maxSteps: 100, step: 0.01 });
    expect(r.result.methods).toEqual([method]);
    expect(r.stats.acceptedSteps).toBe(100);
    expect(Math.abs(r.y[0] - Math.exp(-1))).toBeLessThan(0.01); // Euler's global error ≈ h/2·e^{−1} ≈ 0.002
    expect(() => segment(decay, 1, [1], { method, rtol: 1e-6, atol: 1e-9, maxSteps: 100 })).toThrow(RangeError);
  });

  it("runs 'rosenbrock' and 'dop853' directly", () => {
    const r = segment(protheroRobinson, 1, [1], settings('rosenbrock'));
    expect(r.result.methods).toEqual(['rosenbrock']);
    expect(Math.abs(r.y[0] - Math.cos(1))).toBeLessThan(1e-5);
    const d = segment(oscillator, 1, [1, 0], settings('dop853'));
    expect(d.result.methods).toEqual(['dop853']);
    expect(maxAbsDiff(d.y, [Math.cos(1), -Math.sin(1)])).toBeLessThan(1e-5);
  });
});
