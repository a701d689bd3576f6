/**
 * The fixed-step methods through the whole engine (scenario → schedule → segments → output):
 * their observed order of convergence from step halving on a linear multiple-dose scenario,
 * against the exact path of the same scenario.
 *
 * Orders: explicit Euler 1, Heun 2, classical Runge–Kutta 4, two-step Adams–Bashforth with
 * the trapezoidal corrector in PECE mode 2 (Hairer, Nørsett & Wanner, Solving ODEs I, §II.1,
 * §II.2 and §III.1).
 */
import { describe, expect, it } from 'vitest';
import { concentration, expectWithin, rowsOf, run } from './helpers.ts';
import type { SimulationResult } from '../../models/simulate.ts';

// Fictional "sorbanil": 200 mg by mouth every 8 h × 4 (ka = 1.2 1/h, F = 0.8) plus a 100 mg IV bolus at
// 12 h; V1 = 20 L, peripheral V2 = 30 L with Q = 5 L/h, CL = 4 L/h. Dose times lie on every step grid used.
const scenario = (method: string, step?: number) => ({
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
  output: { end: 36, step: 0.5 },
  solver: { method, ...(step ? { step } : {}) },
});

const exact = run(scenario('exact'));

/** Largest error of the central concentration over all rows, relative to its peak. */
function globalError(result: SimulationResult): number {
  const ref = concentration(exact, 'central');
  const c = concentration(result, 'central');
  expect(Array.from(result.times)).toEqual(Array.from(exact.times));
  const peak = Math.max(...ref);
  let worst = 0;
  for (const row of rowsOf(result)) worst = Math.max(worst, Math.abs(c[row.index] - ref[row.index]) / peak);
  return worst;
}

describe('fixed-step methods: observed order from step halving, through the whole engine', () => {
  it.each([
    ['euler', 1, 0.05],
    ['heun', 2, 0.1],
    ['rk4', 4, 0.1],
    ['abm2', 2, 0.1],
  ] as const)('%s converges with order %s', (method, order, h) => {
    const coarse = run(scenario(method, h));
    const fine = run(scenario(method, h / 2));
    expect(coarse.diagnostics.path).toBe('fixed');
    // h·λmax ≤ 0.15 for the fastest rate (≈ 1.5 1/h): inside every method's stability interval and
    // below the engine's "coarse step" warning.
    expect(coarse.diagnostics.warnings).toEqual([]);
    const e1 = globalError(coarse);
    const e2 = globalError(fine);
    // Errors stay far above round-off (rk4 at h/2: ≈ 1e-8 of the peak).
    expect(e2).toBeGreaterThan(1e-11);
    // Global error C·h^p + O(h^{p+1}): log2 of the ratio is p up to O(h) ≈ 0.1 (HNW I, §II.3).
    const observed = Math.log2(e1 / e2);
    if (process.env.REFERENCE_REPORT) console.log(`[reference] order ${method}: errors ${e1.toExponential(2)} → ${e2.toExponential(2)}, observed ${observed.toFixed(3)}`);
    expectWithin(Math.abs(observed - order), 0.2, `observed order of ${method} minus ${order}`);
  });

  it('abm2 (PECE) uses about two derivative evaluations per step', () => {
    const result = run(scenario('abm2', 0.1));
    const d = result.diagnostics;
    const perStep = d.derivativeEvaluations / d.acceptedSteps;
    // PECE: one evaluation at the predicted and one at the corrected value per step (HNW I, §III.1);
    // the history restarts at each dose, adding one evaluation (the initial slope) per segment.
    expect(perStep).toBeGreaterThanOrEqual(2);
    expectWithin(perStep - 2, d.segments / d.acceptedSteps + 1e-12, 'abm2 evaluations per step beyond 2');
    expect(perStep).toBeLessThan(2.05);
  });
});
