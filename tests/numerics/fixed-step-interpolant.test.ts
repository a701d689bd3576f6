/**
 * Values between the steps of the fixed-step methods (steady-state issue, point 5): each
 * method's interpolant keeps its character — linear between Euler steps, the quadratic
 * through (y0, f0, y1) for Heun and ABM2 (Heun's own second-order continuous extension),
 * cubic Hermite for RK4 — so Euler never reports a value outside the range of the steps
 * around it, and none of them dips below zero where the steps do not.
 */
import { describe, expect, it } from 'vitest';
import { scheduleOf } from '../../models/building/events.ts';
import { normaliseScenario } from '../../models/scenario/normalize.ts';
import { integrateSchedule } from '../../models/solving/numerical-path.ts';
import { integrateAbm2 } from '../../models/solving/numerics/adams-bashforth-moulton.ts';
import { DenseStore } from '../../models/solving/numerics/dense-store.ts';
import { integrateFixed } from '../../models/solving/numerics/explicit-rk.ts';
import { emptyStats } from '../../models/solving/numerics/ode-system.ts';
import { EULER, HEUN, RK4 } from '../../models/solving/numerics/tableaux.ts';
import { simulate } from '../../models/simulate.ts';
import { CompartmentSystem } from '../../models/building/system.ts';
import { decay } from './test-problems.ts';

// Fictional "sorbanil" (as in tests/reference/fixed-step-order.test.ts): oral doses every 8 h and an IV
// bolus at 12 h; V1 = 20 L, peripheral V2 = 30 L, Q = 5 L/h, CL = 4 L/h. The fastest rate (≈ 1.5 1/h)
// times h = 0.4 h is 0.6, inside every method's stability interval, yet coarse.
const scenario = (method: string, step: number, outputStep = 0.4) => ({
  title: 'Sorbanil 200 mg by mouth every 8 h',
  compartments: [{ id: 'gut' }, { id: 'central', volume: 20 }, { id: 'tissue', volume: 30 }],
  transfers: [
    { from: 'gut', to: 'central', k: 1.2 },
    { from: 'central', to: 'tissue', cl: 5 },
    { from: 'tissue', to: 'central', cl: 5 },
    { from: 'central', cl: 4 },
  ],
  doses: [
    { into: 'gut', amount: 200, bioavailability: 0.8, every: 8, count: 4 },
    { into: 'central', amount: 100, at: 12 },
  ],
  output: { end: 36, step: outputStep },
  solver: { method, step },
});

function trajectory(method: string, step: number) {
  const model = normaliseScenario(scenario(method, step));
  if (!model.ok) throw new Error(JSON.stringify(model.problems));
  const system = new CompartmentSystem(model.value);
  const run = integrateSchedule(system, scheduleOf(model.value), new Float64Array(system.dimension), model.value.solver, emptyStats());
  return { store: run.trajectory, n: system.dimension, compartments: model.value.compartments.length };
}

/**
 * For every step [t_k, t_{k+1}] and 19 interior points: the largest amount by which a value
 * falls below the smaller of the two step values (below) or above the larger (above), over the
 * compartments' amounts; the smallest amount seen (lowest); and the smallest seen between two
 * non-negative step values (lowestBetweenNonNegative).
 */
function excursions(method: string, step: number) {
  const { store, compartments } = trajectory(method, step);
  const knots = store.knots();
  const a = new Float64Array(store.dimension);
  const b = new Float64Array(store.dimension);
  const v = new Float64Array(store.dimension);
  let below = 0;
  let above = 0;
  let lowest = Infinity;
  let lowestBetweenNonNegative = Infinity;
  for (let k = 0; k + 1 < knots.length; k++) {
    const [t0, t1] = [knots[k], knots[k + 1]];
    if (!(t1 > t0)) continue;
    store.stateAt(t0, 'right', a);
    store.stateAt(t1, 'left', b);
    for (let j = 1; j < 20; j++) {
      store.stateAt(t0 + (j / 20) * (t1 - t0), 'left', v);
      for (let c = 0; c < compartments; c++) {
        below = Math.max(below, Math.min(a[c], b[c]) - v[c]);
        above = Math.max(above, v[c] - Math.max(a[c], b[c]));
        lowest = Math.min(lowest, v[c]);
        if (a[c] >= 0 && b[c] >= 0) lowestBetweenNonNegative = Math.min(lowestBetweenNonNegative, v[c]);
      }
    }
  }
  return { below, above, lowest, lowestBetweenNonNegative };
}

describe('values between fixed steps', () => {
  it('euler at h = 0.4 h: linear between steps, never outside the range of the two step values', () => {
    const e = excursions('euler', 0.4);
    // A convex combination of the two step values, up to one rounding of each (amounts ≤ 200 mg).
    expect(e.below).toBeLessThanOrEqual(1e-12);
    expect(e.above).toBeLessThanOrEqual(1e-12);
    expect(e.lowest).toBeGreaterThanOrEqual(0);
  });

  it.each([
    ['heun', 0.4],
    ['heun', 1.2],
    ['abm2', 0.4],
    ['abm2', 0.8],
    ['abm2', 1.2],
  ] as const)('%s at h = %s h: the quadratic stays non-negative between non-negative steps', (method, h) => {
    // The quadratic through (y0, f0, y1) has Bernstein coefficients y0, y0 + h·f0/2, y1; with f0 ≥ −k·y0
    // (k the compartment's total rate out, at most 1.2 1/h here, so hk ≤ 1.44) the middle one is
    // ≥ y0(1 − hk/2) ≥ 0. (The cubic Hermite it replaces gave −8.9 mg between non-negative steps for
    // both methods at h = 1.2 h.) ABM2's own steps oscillate below zero once hλ nears 1 for the gut's
    // 1.2 1/h (a complex pair of roots): those values are the method's, and the warning about them is right.
    const e = excursions(method, h);
    expect(e.lowestBetweenNonNegative).toBeGreaterThanOrEqual(0);
  });

  it('euler through simulate(): no negative amount reported between steps, no warning', () => {
    // Output every 0.1 h: three of every four rows fall between steps.
    const result = simulate(scenario('euler', 0.4, 0.1));
    expect(result.ok).toBe(true);
    if (!result.ok) return;
    for (const s of result.value.compartments) expect(Math.min(...s.amount)).toBeGreaterThanOrEqual(0);
    expect(result.value.diagnostics.warnings.filter((w) => /negative/.test(w))).toEqual([]);
  });
});

describe('the interpolants keep each method’s order between the steps', () => {
  /** Largest error on y' = −y, y(0) = 1, over 97 points of [0, 1] off the step grid (exact: e^{−t}). */
  function worstBetweenSteps(method: string, steps: number): number {
    const store = new DenseStore(1);
    const h = 1 / steps;
    if (method === 'abm2') integrateAbm2(decay, 0, 1, Float64Array.of(1), h, store, emptyStats(), 1e9);
    else integrateFixed(decay, 0, 1, Float64Array.of(1), method === 'euler' ? EULER : method === 'heun' ? HEUN : RK4, h, store, emptyStats(), 1e9);
    const out = new Float64Array(1);
    let worst = 0;
    for (let i = 1; i < 98; i++) {
      const t = i / 98;
      store.stateAt(t, 'left', out);
      worst = Math.max(worst, Math.abs(out[0] - Math.exp(-t)));
    }
    return worst;
  }

  it.each([
    ['euler', 1],
    ['heun', 2],
    ['abm2', 2],
    ['rk4', 4],
  ] as const)('%s: order %i', (method, order) => {
    // Global error C·h^p at the steps plus an interpolation error of the same or higher order: log2 of the
    // ratio on halving h is p up to O(h) (HNW I, §II.3); 40 → 80 steps, ±0.25.
    const observed = Math.log2(worstBetweenSteps(method, 40) / worstBetweenSteps(method, 80));
    expect(Math.abs(observed - order)).toBeLessThan(0.25);
  });

  it('heun: the quadratic is Heun’s own continuous extension y0 + h(θ − θ²/2)k1 + h(θ²/2)k2', () => {
    // The unique second-order continuous extension of the two stages (c = 0, 1): b1(θ) + b2(θ) = θ,
    // b2(θ)·1 = θ²/2 (HNW I, §II.6, order conditions of dense output). One step of h = 0.1 on y' = −y:
    // k1 = −1, k2 = −(1 − 0.1) = −0.9.
    const store = new DenseStore(1);
    integrateFixed(decay, 0, 0.1, Float64Array.of(1), HEUN, 0.1, store, emptyStats(), 1);
    const out = new Float64Array(1);
    for (const theta of [0.1, 0.3, 0.5, 0.8]) {
      store.stateAt(0.1 * theta, 'left', out);
      const expected = 1 + 0.1 * (theta - theta ** 2 / 2) * -1 + 0.1 * (theta ** 2 / 2) * -0.9;
      expect(Math.abs(out[0] - expected)).toBeLessThan(1e-15);
    }
  });
});
