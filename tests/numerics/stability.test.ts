/**
 * Real-axis stability limits of the fixed-step methods (models/solving/numerics/stability.ts),
 * checked three ways: the table against the root of |stability function| = 1 computed here
 * from the tableaux themselves; for ABM2 against the root of the spectral radius of its
 * characteristic polynomial, whose coefficients are read off the engine's own steps; and the
 * engine's behaviour on y' = −λy just inside and just outside each limit.
 */
import { describe, expect, it } from 'vitest';
import { integrateAbm2 } from '../../models/solving/numerics/adams-bashforth-moulton';
import { DenseStore } from '../../models/solving/numerics/dense-store';
import { integrateFixed } from '../../models/solving/numerics/explicit-rk';
import { emptyStats } from '../../models/solving/numerics/ode-system';
import { realStabilityLimit } from '../../models/solving/numerics/stability';
import type { ExplicitTableau } from '../../models/solving/numerics/tableau';
import { EULER, HEUN, RK4 } from '../../models/solving/numerics/tableaux';
import { linearSystem } from './test-problems';

/**
 * Stability function of an explicit Runge–Kutta method, R(z) = 1 + Σ_{k≥1} z^k bᵀA^{k−1}𝟙
 * (Hairer & Wanner, Solving ODEs II, §IV.2, eq. (2.4) expanded as a Neumann series, finite
 * because A is strictly lower triangular), evaluated from the tableau's a and b.
 */
function stabilityFunction(tab: ExplicitTableau): (z: number) => number {
  const s = tab.stages;
  const a = (i: number, j: number): number => tab.a[i][j] ?? 0;
  // coefficients bᵀA^{k−1}𝟙 for k = 1…s
  const coeffs: number[] = [];
  let v = new Array<number>(s).fill(1);
  for (let k = 1; k <= s; k++) {
    coeffs.push(tab.b.reduce((sum, bj, j) => sum + bj * v[j], 0));
    v = v.map((_, i) => v.reduce((sum, vj, j) => sum + a(i, j) * vj, 0));
  }
  return (z) => 1 + coeffs.reduce((sum, c, k) => sum + c * z ** (k + 1), 0);
}

/** Largest x with g(−ξ) ≤ 1 for every ξ in (0, x]: scan for the first crossing, then bisect it to rounding. */
function realLimit(g: (x: number) => number): number {
  const dx = 1e-3;
  // From 0.01: closer to 0 the ABM2 recursion read off three steps loses digits (its determinant is O(z³)).
  let x = 0.01;
  while (g(-x) <= 1) x += dx;
  let lo = x - dx;
  let hi = x;
  for (let i = 0; i < 200 && hi - lo > 4 * Number.EPSILON * hi; i++) {
    const mid = 0.5 * (lo + hi);
    if (g(-mid) <= 1) lo = mid;
    else hi = mid;
  }
  return 0.5 * (lo + hi);
}

/** Spectral radius of ζ² − p ζ + q (real p, q). */
function spectralRadius(p: number, q: number): number {
  const disc = p * p - 4 * q;
  if (disc < 0) return Math.sqrt(q); // complex pair: |ζ|² = q
  const r = Math.sqrt(disc);
  return Math.max(Math.abs(0.5 * (p + r)), Math.abs(0.5 * (p - r)));
}

/**
 * ABM2 (PECE: AB2 predictor, trapezoidal corrector) on y' = zy with h = 1 advances by the
 * two-step recursion y_{n+1} = p(z) y_n − q(z) y_{n−1} once its Heun start is made. Runs of
 * 1, 2 and 3 steps from y0 = 1 give y1, y2, y3, from which p and q follow:
 *   y2 = p y1 − q,  y3 = p y2 − q y1.
 */
function abm2Recursion(z: number): { p: number; q: number } {
  const ys = [1, 2, 3].map((steps) => {
    const y = Float64Array.of(1);
    integrateAbm2(linearSystem([[z]]), 0, steps, y, 1, new DenseStore(1), emptyStats(), steps);
    return y[0];
  });
  const [y1, y2, y3] = ys;
  const det = -y1 * y1 + y2; // | y1 −1 ; y2 −y1 |
  const p = (-y2 * y1 + y3) / det;
  const q = (y1 * y3 - y2 * y2) / det;
  return { p, q };
}

describe('real-axis stability limits of the fixed-step methods', () => {
  it.each([
    ['euler', EULER],
    ['heun', HEUN],
    ['rk4', RK4],
  ] as const)('%s: the table holds the root of |R(−x)| = 1 computed from the tableau', (name, tab) => {
    const R = stabilityFunction(tab);
    const x = realLimit((z) => Math.abs(R(z)));
    // Bisection to rounding: agreement to a few ulps of the limit.
    expect(Math.abs(x - realStabilityLimit[name])).toBeLessThan(1e-12 * x);
  });

  it('rk4: the limit is the real root of x³ − 4x² + 12x − 24 = 0 (R(−x) = 1 divided by −x/24)', () => {
    const x = realStabilityLimit.rk4;
    expect(Math.abs(x ** 3 - 4 * x ** 2 + 12 * x - 24)).toBeLessThan(1e-12);
  });

  it('abm2: the engine advances by ζ² − (1 + z + ¾z²)ζ + ¼z², the PECE stability polynomial', () => {
    // Lambert (1991), Numerical Methods for Ordinary Differential Systems, ch. 4 (predictor–corrector
    // stability, P(EC)^μE with μ = 1): π(ζ, z) = ρ(ζ) − zσ(ζ) + zβ_k(ρ*(ζ) − zσ*(ζ)) with the corrector
    // ρ = ζ² − ζ, σ = (ζ² + ζ)/2, β_k = ½ and the predictor ρ* = ζ² − ζ, σ* = (3ζ − 1)/2.
    // Away from z = −2, where Heun's first step gives y1 = y0 and the three runs no longer separate p from q.
    for (const z of [-0.3, -1, -1.5, -1.8, -2.3, -2.8]) {
      const { p, q } = abm2Recursion(z);
      // A handful of roundings in three steps: 1e-12 relative.
      expect(Math.abs(p - (1 + z + 0.75 * z * z))).toBeLessThan(1e-12 * Math.abs(p) + 1e-14);
      expect(Math.abs(q - 0.25 * z * z)).toBeLessThan(1e-12 * q);
    }
  });

  it('abm2: the table holds the root of spectral radius = 1 of that polynomial', () => {
    const x = realLimit((z) => spectralRadius(1 + z + 0.75 * z * z, 0.25 * z * z));
    // Just above x = 2 the discriminant is ≈ 4(x − 2) and the larger root ≈ 1 + √(x − 2): rounding in the
    // discriminant (1e-16) moves the computed crossing by no more than about 1e-15.
    expect(Math.abs(x - realStabilityLimit.abm2)).toBeLessThan(1e-12);
    expect(realStabilityLimit.abm2).toBe(2);
  });
});

/** |y(N·h)| on y' = −λy from y = 1 with h = 1 (so hλ = λ). */
function amplitude(method: string, hl: number, steps: number): number {
  const system = linearSystem([[-hl]]);
  const y = Float64Array.of(1);
  const store = new DenseStore(1);
  if (method === 'abm2') integrateAbm2(system, 0, steps, y, 1, store, emptyStats(), steps);
  else {
    const tab = method === 'euler' ? EULER : method === 'heun' ? HEUN : RK4;
    integrateFixed(system, 0, steps, y, tab, 1, store, emptyStats(), steps);
  }
  return Math.abs(y[0]);
}

describe('the engine on y′ = −λy on both sides of each limit', () => {
  it.each(['euler', 'heun', 'rk4', 'abm2'])('%s decays at 0.99 × the limit and grows at 1.01 ×', (method) => {
    const limit = realStabilityLimit[method];
    // 0.99: the amplification factor is below 1 by 1e-2 or more (|R| = 0.98, 0.98, 0.96 for euler, heun,
    // rk4; abm2's complex pair |ζ| = hλ/2 = 0.99), so 2000 steps shrink the solution to 1e-8 or less
    // (abm2: 0.99²⁰⁰⁰ ≈ 2e-9 times a constant of about 1/sin(arg ζ) ≈ 7). 1.01: above 1 by 2e-2 or more
    // (abm2: largest root ≈ 1.16), so 2000 steps grow it beyond e³⁹ ≈ 1e17 without overflowing.
    expect(amplitude(method, 0.99 * limit, 2000)).toBeLessThan(1e-6);
    expect(amplitude(method, 1.01 * limit, 2000)).toBeGreaterThan(1e6);
  });
});
