/**
 * LU factorisation with partial pivoting, PA = LU (Golub & Van Loan, Matrix
 * Computations, 4th ed., Alg. 3.4.1), stored in place: the strictly lower part holds L
 * (unit diagonal implied), the upper part holds U. piv[k] is the row exchanged with row
 * k at step k, so the permutation is replayed in order when solving.
 */

import { copyMatrix, copyVector, maxAbs } from './dense.ts';

const EPS = Number.EPSILON;

/**
 * Factors a (n×n, row-major) in place. Returns false when the matrix is singular to
 * working precision — a pivot no larger than n·ε·max|a_ij|, the size of the rounding
 * already committed by elimination — or contains non-finite entries; the factors are
 * then incomplete and must not be used.
 */
export function luFactor(a: Float64Array, n: number, piv: Int32Array): boolean {
  const scale = maxAbs(a, n);
  if (!Number.isFinite(scale) || scale === 0) return false;
  const tiny = n * EPS * scale;
  for (let k = 0; k < n; k++) {
    let p = k;
    let big = Math.abs(a[k * n + k]);
    for (let i = k + 1; i < n; i++) {
      const v = Math.abs(a[i * n + k]);
      if (v > big) {
        big = v;
        p = i;
      }
    }
    piv[k] = p;
    if (!(big > tiny)) return false;
    if (p !== k) swapRows(a, n, k, p);
    const rk = k * n;
    const inv = 1 / a[rk + k];
    for (let i = k + 1; i < n; i++) {
      const ri = i * n;
      const l = a[ri + k] * inv;
      a[ri + k] = l;
      if (l === 0) continue;
      for (let j = k + 1; j < n; j++) a[ri + j] -= l * a[rk + j];
    }
  }
  return true;
}

function swapRows(a: Float64Array, n: number, r1: number, r2: number): void {
  const o1 = r1 * n;
  const o2 = r2 * n;
  for (let j = 0; j < n; j++) {
    const t = a[o1 + j];
    a[o1 + j] = a[o2 + j];
    a[o2 + j] = t;
  }
}

/** Solves A x = b in place on b using the factors from luFactor; returns b. */
export function luSolve(lu: Float64Array, n: number, piv: Int32Array, b: Float64Array): Float64Array {
  for (let k = 0; k < n; k++) {
    const p = piv[k];
    if (p !== k) {
      const t = b[k];
      b[k] = b[p];
      b[p] = t;
    }
  }
  for (let i = 1; i < n; i++) {
    const ri = i * n;
    let s = b[i];
    for (let j = 0; j < i; j++) s -= lu[ri + j] * b[j];
    b[i] = s;
  }
  for (let i = n - 1; i >= 0; i--) {
    const ri = i * n;
    let s = b[i];
    for (let j = i + 1; j < n; j++) s -= lu[ri + j] * b[j];
    b[i] = s / lu[ri + i];
  }
  return b;
}

/**
 * Solves A X = B in place on B, where B is n×m row-major (m right-hand sides side by
 * side); returns B. Works on whole rows of B so the inner loops stay contiguous.
 */
export function luSolveMatrix(lu: Float64Array, n: number, piv: Int32Array, b: Float64Array, m: number): Float64Array {
  for (let k = 0; k < n; k++) {
    const p = piv[k];
    if (p !== k) swapRows(b, m, k, p);
  }
  for (let i = 1; i < n; i++) {
    const ri = i * m;
    for (let k = 0; k < i; k++) {
      const l = lu[i * n + k];
      if (l === 0) continue;
      const rk = k * m;
      for (let j = 0; j < m; j++) b[ri + j] -= l * b[rk + j];
    }
  }
  for (let i = n - 1; i >= 0; i--) {
    const ri = i * m;
    for (let k = i + 1; k < n; k++) {
      const u = lu[i * n + k];
      if (u === 0) continue;
      const rk = k * m;
      for (let j = 0; j < m; j++) b[ri + j] -= u * b[rk + j];
    }
    const inv = 1 / lu[i * n + i];
    for (let j = 0; j < m; j++) b[ri + j] *= inv;
  }
  return b;
}

/**
 * Convenience: solves A x = b without touching A or b. Returns null when A is singular
 * to working precision (see luFactor). Allocates; use luFactor/luSolve in hot paths.
 */
export function solveLinear(a: Float64Array, n: number, b: Float64Array): Float64Array | null {
  const lu = copyMatrix(a, n);
  const piv = new Int32Array(n);
  if (!luFactor(lu, n, piv)) return null;
  return luSolve(lu, n, piv, copyVector(b, n));
}
