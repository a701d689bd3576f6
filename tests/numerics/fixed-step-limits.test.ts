/**
 * Fixed-step methods within their limits: the step budget (solver.maxSteps) holds for euler,
 * heun, rk4 and abm2 as for the adaptive methods, and since a fixed step's count is known
 * before the first step, a run that cannot fit is refused before it starts. Likewise the
 * dense store's memory ceiling.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { scheduleOf } from '../../models/building/events.ts';
import { normaliseScenario } from '../../models/scenario/normalize.ts';
import { integrateSchedule } from '../../models/solving/numerical-path.ts';
import { integrateAbm2 } from '../../models/solving/numerics/adams-bashforth-moulton.ts';
import { DENSE_STORE_MAX_BYTES, DenseStore } from '../../models/solving/numerics/dense-store.ts';
import { integrateAdaptive, integrateFixed } from '../../models/solving/numerics/explicit-rk.ts';
import { emptyStats, IntegrationFailure, type SolverStats } from '../../models/solving/numerics/ode-system.ts';
import type { ExplicitTableau } from '../../models/solving/numerics/tableau.ts';
import { DOPRI5, EULER, HEUN, RK4 } from '../../models/solving/numerics/tableaux.ts';
import { simulate } from '../../models/simulate.ts';
import { CompartmentSystem } from '../../models/building/system.ts';
import { decay, oscillator, twoState } from './test-problems.ts';

const brennock = JSON.parse(readFileSync(new URL('../../samples/brennock-oral-bid.json', import.meta.url), 'utf8'));

function failureOf(action: () => void): IntegrationFailure {
  try {
    action();
  } catch (e) {
    if (e instanceof IntegrationFailure) return e;
    throw e;
  }
  throw new Error('expected an IntegrationFailure');
}

/** The brennock sample's schedule through the numerical path with the given solver settings. */
function brennockRun(solver: Record<string, unknown>, stats: SolverStats) {
  const model = normaliseScenario({ ...brennock, solver });
  if (!model.ok) throw new Error(JSON.stringify(model.problems));
  const system = new CompartmentSystem(model.value);
  return () => integrateSchedule(system, scheduleOf(model.value), new Float64Array(system.dimension), model.value.solver, stats);
}

type Fixed = (h: number, t1: number, maxSteps: number, stats: SolverStats) => void;
const rk =
  (tab: ExplicitTableau): Fixed =>
  (h, t1, maxSteps, stats) =>
    integrateFixed(twoState, 0, t1, Float64Array.of(1, 0), tab, h, new DenseStore(2), stats, maxSteps);
const METHODS: readonly [string, Fixed][] = [
  ['euler', rk(EULER)],
  ['heun', rk(HEUN)],
  ['rk4', rk(RK4)],
  ['abm2', (h, t1, maxSteps, stats) => integrateAbm2(twoState, 0, t1, Float64Array.of(1, 0), h, new DenseStore(2), stats, maxSteps)],
];

describe.each(METHODS)('%s: step budget', (_name, run) => {
  it('runs exactly maxSteps steps when the span needs that many', () => {
    const stats = emptyStats();
    run(0.01, 1, 100, stats); // 100 steps of 0.01
    expect(stats.acceptedSteps).toBe(100);
  });

  it('refuses a span that needs more than maxSteps before evaluating anything', () => {
    const stats = emptyStats();
    const f = failureOf(() => run(0.01, 1, 99, stats));
    expect(f.reason).toBe('too-many-steps');
    expect(stats.acceptedSteps).toBe(0);
    expect(stats.derivativeEvaluations).toBe(0);
    // The budget of 99 steps of 0.01 from t = 0 runs out at t = 0.99.
    expect(f.time).toBeCloseTo(0.99, 12);
    expect(f.message).toMatch(/100 steps/);
    expect(f.message).toMatch(/99/);
  });
});

describe('brennock sample, euler with step 1e-5 and maxSteps 100 (hardening issue, point 2)', () => {
  it('fails with too-many-steps before the first step instead of taking 16.8 million', () => {
    const stats = emptyStats();
    const f = failureOf(brennockRun({ method: 'euler', step: 1e-5, maxSteps: 100 }, stats));
    expect(f.reason).toBe('too-many-steps');
    // Refused from the step count alone: nothing integrated, nothing stored.
    expect(stats.acceptedSteps).toBe(0);
    expect(stats.derivativeEvaluations).toBe(0);
    // 7 days = 168 h at 1e-5 h per step: 16.8 million steps (one more for the 20 min lag off the grid);
    // the budget of 100 runs out at t = 100 × 1e-5 h.
    expect(f.message).toMatch(/\b1680000\d steps/);
    expect(f.time).toBeCloseTo(1e-3, 12);
  });

  it('through simulate(): a problem under path solver naming maxSteps', () => {
    const result = simulate({ ...brennock, solver: { method: 'euler', step: 1e-5, maxSteps: 100 } });
    expect(result.ok).toBe(false);
    if (result.ok) return;
    // 'solver', or 'solver.step' where simulate() names the fixed step as the setting to change.
    expect(result.problems[0].path).toMatch(/^solver(\.step)?$/);
    expect(result.problems[0].message).toMatch(/maxSteps \(100\)/);
  });

  it.each(['heun', 'rk4', 'abm2'])('%s: the same refusal', (method) => {
    const stats = emptyStats();
    const f = failureOf(brennockRun({ method, step: 1e-5, maxSteps: 100 }, stats));
    expect(f.reason).toBe('too-many-steps');
    expect(stats.derivativeEvaluations).toBe(0);
  });

  it('counts the steps of every segment together: each dose interval fits the budget, the whole week does not', () => {
    // Step 0.01 h: the first segment (to the 20 min lag) takes 34 steps, each 12 h interval 1200, the
    // last 11⅔ h 1167: 16801 in all. Each segment restarts its grid at its breakpoint.
    const stats = emptyStats();
    const f = failureOf(brennockRun({ method: 'rk4', step: 0.01, maxSteps: 5000 }, stats));
    expect(f.reason).toBe('too-many-steps');
    expect(stats.derivativeEvaluations).toBe(0);
    expect(f.message).toMatch(/\b16801 steps/);
    // 34 + 4 × 1200 = 4834 steps reach 48⅓ h; the 166 left of the budget end at 48⅓ + 1.66 h.
    expect(f.time).toBeCloseTo(48 + 1 / 3 + 1.66, 9);
  });

  it('a budget that suffices is used as before', () => {
    const stats = emptyStats();
    brennockRun({ method: 'euler', step: 0.01, maxSteps: 16_801 }, stats)();
    expect(stats.acceptedSteps).toBe(16_801);
  });
});

describe('memory ceiling of the dense store', () => {
  it('brennock, euler with step 5e-6: 33.6 million steps fit maxSteps (50 million) but not the store, refused before the first step', () => {
    const stats = emptyStats();
    const f = failureOf(brennockRun({ method: 'euler', step: 5e-6, maxSteps: 50_000_000 }, stats));
    expect(f.reason).toBe('too-much-memory');
    expect(stats.derivativeEvaluations).toBe(0);
    expect(f.message).toMatch(/1 GiB/);
    expect(f.message).toMatch(/coarser step/);
    expect(DENSE_STORE_MAX_BYTES).toBe(2 ** 30);
  });

  it.each(METHODS)('%s: refused before the first step when the store cannot hold the span', (name) => {
    const stats = emptyStats();
    const store = new DenseStore(2, 64 * 1024);
    const f = failureOf(() => {
      if (name === 'abm2') integrateAbm2(twoState, 0, 100, Float64Array.of(1, 0), 1e-3, store, stats, 1e9);
      else integrateFixed(twoState, 0, 100, Float64Array.of(1, 0), name === 'euler' ? EULER : name === 'heun' ? HEUN : RK4, 1e-3, store, stats, 1e9);
    });
    expect(f.reason).toBe('too-much-memory');
    expect(stats.derivativeEvaluations).toBe(0);
    expect(store.steps).toBe(0);
  });

  it('a fixed-step run that fits is not refused, and the store stays within its ceiling', () => {
    // 10,000 RK4 steps of one component: 4 vectors × 8 B + 25 B of step record ≈ 570 kB.
    const store = new DenseStore(1, 1024 * 1024);
    const stats = emptyStats();
    integrateFixed(decay, 0, 1, Float64Array.of(1), RK4, 1e-4, store, stats, 1e9);
    expect(stats.acceptedSteps).toBe(10_000);
    expect(store.bytes).toBeLessThanOrEqual(1024 * 1024);
    expect(store.bytes).toBeGreaterThan(10_000 * (32 + 25));
  });

  it('an adaptive run stops with too-much-memory at the ceiling, the store never above it', () => {
    // The oscillator over 2000 time units at rtol 1e-10 takes tens of thousands of DOPRI5 steps
    // (5 vectors × 2 components × 8 B + 25 B ≈ 105 B each): far beyond 512 KiB.
    const store = new DenseStore(2, 512 * 1024);
    const stats = emptyStats();
    const f = failureOf(() =>
      integrateAdaptive(oscillator, 0, 2000, Float64Array.of(1, 0), DOPRI5, { rtol: 1e-10, atol: 1e-12, maxSteps: 1e9 }, store, stats),
    );
    expect(f.reason).toBe('too-much-memory');
    expect(store.bytes).toBeLessThanOrEqual(512 * 1024);
    expect(stats.acceptedSteps).toBeGreaterThan(1000);
    // Stopped where the last stored step ends.
    expect(f.time).toBe(store.end);
    expect(f.message).toMatch(/512 KiB/);
    expect(f.message).toMatch(/looser tolerance/);
  });
});

describe('bytes per stored step of the fixed-step methods', () => {
  // Each method keeps only the vectors its interpolant needs: euler 2 (linear), heun and abm2 3
  // (quadratic), rk4 4 (cubic Hermite), n values of 8 B each, plus the step record (start and
  // length 8 B each, chunk and offset 4 B each, form 1 B). 100,000 steps make the partly filled
  // last chunk and record block (≤ 89 KiB) count for under 1 B per step.
  it.each([
    ['euler', 2],
    ['heun', 3],
    ['rk4', 4],
    ['abm2', 3],
  ] as const)('%s stores %i vectors per step', (name, vectors) => {
    const store = new DenseStore(2);
    const stats = emptyStats();
    if (name === 'abm2') integrateAbm2(twoState, 0, 1, Float64Array.of(1, 0), 1e-5, store, stats, 1e9);
    else integrateFixed(twoState, 0, 1, Float64Array.of(1, 0), name === 'euler' ? EULER : name === 'heun' ? HEUN : RK4, 1e-5, store, stats, 1e9);
    expect(store.steps).toBe(100_000);
    const perStep = store.bytes / store.steps;
    const expected = vectors * 2 * 8 + 25;
    expect(perStep).toBeGreaterThanOrEqual(expected);
    expect(perStep).toBeLessThan(expected + 1);
  });
});
