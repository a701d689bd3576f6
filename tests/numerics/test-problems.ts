/** Test problems with known exact solutions, shared by the numerics tests. */
import type { OdeSystem } from '../../models/solving/numerics/ode-system';

/** y' = A y with a constant row-major matrix A. */
export function linearSystem(a: readonly number[][]): OdeSystem {
  const n = a.length;
  return {
    dimension: n,
    derivative(_t, y, out) {
      for (let i = 0; i < n; i++) {
        let s = 0;
        for (let j = 0; j < n; j++) s += a[i][j] * y[j];
        out[i] = s;
      }
    },
    jacobian(_t, _y, out) {
      for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) out[i * n + j] = a[i][j];
    },
  };
}

/** y' = −y; exact solution y(t) = y(0)·e^{−t}. */
export const decay = linearSystem([[-1]]);

/** Eigenvalues −1 (vector (1,1)) and −3 (vector (1,−1)). */
export const twoState = linearSystem([
  [-2, 1],
  [1, -2],
]);

/** Exact solution of twoState from y(0) = (p, q). */
export function twoStateExact(t: number, p: number, q: number): [number, number] {
  const s = 0.5 * (p + q) * Math.exp(-t);
  const d = 0.5 * (p - q) * Math.exp(-3 * t);
  return [s + d, s - d];
}

/** y'' = −y as a system; from (1, 0) the exact solution is (cos t, −sin t). */
export const oscillator = linearSystem([
  [0, 1],
  [-1, 0],
]);

/** Eigenvalues −1 (vector (1,1)) and −10⁴ (vector (1,−1)): stiff once the fast mode has decayed. */
export const stiffPair = linearSystem([
  [-5000.5, 4999.5],
  [4999.5, -5000.5],
]);

/** Exact solution of stiffPair from y(0) = (p, q). */
export function stiffPairExact(t: number, p: number, q: number): [number, number] {
  const s = 0.5 * (p + q) * Math.exp(-t);
  const d = 0.5 * (p - q) * Math.exp(-1e4 * t);
  return [s + d, s - d];
}

/** y' = y², y(0) = 1: y = 1/(1 − t), blows up at t = 1. */
export const blowUp: OdeSystem = {
  dimension: 1,
  derivative(_t, y, out) {
    out[0] = y[0] * y[0];
  },
  jacobian(_t, y, out) {
    out[0] = 2 * y[0];
  },
};

/** Prothero–Robinson problem y' = −10⁴(y − cos t) − sin t; exact solution y = cos t from y(0) = 1. */
export const protheroRobinson: OdeSystem = {
  dimension: 1,
  derivative(t, y, out) {
    out[0] = -1e4 * (y[0] - Math.cos(t)) - Math.sin(t);
  },
  jacobian(_t, _y, out) {
    out[0] = -1e4;
  },
};

/** Wraps a system so that sampling f outside [lo, hi] (across a discontinuity) throws. */
export function guarded(system: OdeSystem, lo: number, hi: number): OdeSystem {
  return {
    dimension: system.dimension,
    derivative(t, y, out) {
      if (t < lo || t > hi) throw new Error(`f sampled at t = ${t} outside [${lo}, ${hi}]`);
      system.derivative(t, y, out);
    },
    jacobian(t, y, out) {
      if (t < lo || t > hi) throw new Error(`J sampled at t = ${t} outside [${lo}, ${hi}]`);
      system.jacobian(t, y, out);
    },
  };
}

export function maxAbsDiff(a: ArrayLike<number>, b: ArrayLike<number>): number {
  let m = 0;
  for (let i = 0; i < a.length; i++) m = Math.max(m, Math.abs(a[i] - b[i]));
  return m;
}
