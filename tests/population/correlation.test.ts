/**
 * Cholesky factors of correlation matrices, the pair named when one is not positive definite,
 * and the correlation that SubjectRandom normals acquire through the factor.
 */
import { describe, expect, it } from 'vitest';
import { correlate, correlationFactor } from '../../models/population/correlation';
import { SubjectRandom } from '../../models/population/random';

const names = ['CL', 'V', 'Q', 'KA'];

function factorOf(rows: number[][]): Float64Array {
  const r = correlationFactor(Float64Array.from(rows.flat()), rows.length, names);
  if (!r.ok) throw new Error(r.message);
  return r.factor;
}

describe('correlationFactor', () => {
  it('factors a positive definite matrix: L lower triangular, L·Lᵀ = A to 1e-14', () => {
    const a = [[1, 0.6, -0.3, 0.2], [0.6, 1, 0.1, 0.4], [-0.3, 0.1, 1, -0.5], [0.2, 0.4, -0.5, 1]];
    const l = factorOf(a);
    const n = a.length;
    for (let i = 0; i < n; i++) {
      for (let j = 0; j < n; j++) {
        if (j > i) expect(l[i * n + j]).toBe(0);
        let s = 0;
        for (let k = 0; k < n; k++) s += l[i * n + k] * l[j * n + k];
        expect(Math.abs(s - a[i][j])).toBeLessThan(1e-14);
      }
    }
  });

  it('gives the textbook 2×2 factor [[1, 0], [r, √(1 − r²)]]', () => {
    const l = factorOf([[1, -0.8], [-0.8, 1]]);
    const expected = [1, 0, -0.8, 0.6];
    for (let k = 0; k < 4; k++) expect(Math.abs(l[k] - expected[k])).toBeLessThan(2e-16);
  });

  it('names the correlation whose removal restores positive definiteness', () => {
    // det = 1 + 2(0.9)(0.7)(−0.3) − 0.81 − 0.49 − 0.09 < 0; with CL–Q at 0 the block holds
    // (det 0.1), with V–Q at 0 it does not (det −0.3).
    const r = correlationFactor(Float64Array.from([1, 0.9, 0.7, 0.9, 1, -0.3, 0.7, -0.3, 1]), 3, names);
    expect(r.ok).toBe(false);
    if (!r.ok) {
      expect(r.pair).toEqual([0, 2]);
      expect(r.message).toBe("the correlation 0.7 between 'CL' and 'Q' cannot hold together with the others " +
        "(the matrix is not positive definite); lower it or another correlation of 'Q'");
    }
  });

  it('blames the only correlation of the row whose removal restores the block', () => {
    // det with both = 1 + 2(0.9)(−0.6)(0.2) − 0.81 − 0.36 − 0.04 = −0.426: zeroing CL–Q gives
    // 1 − 0.81 − 0.04 = 0.15 (holds), zeroing V–Q gives 1 − 0.81 − 0.36 = −0.17 (fails).
    const r = correlationFactor(Float64Array.from([1, 0.9, -0.6, 0.9, 1, 0.2, -0.6, 0.2, 1]), 3, names);
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.pair).toEqual([0, 2]);
  });

  it('falls back to the largest correlation of the row when no single removal helps', () => {
    // CL–V 0.9, CL–Q 0.9, V–Q −0.5: zeroing CL–Q leaves det −0.06, zeroing V–Q det −0.62.
    const r = correlationFactor(Float64Array.from([1, 0.9, 0.9, 0.9, 1, -0.5, 0.9, -0.5, 1]), 3, names);
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.pair).toEqual([0, 2]);
  });

  it('refuses a correlation of exactly 1 (semi-definite) and says why', () => {
    const r = correlationFactor(Float64Array.from([1, 1, 1, 1]), 2, names);
    expect(r.ok).toBe(false);
    if (!r.ok) {
      expect(r.pair).toEqual([0, 1]);
      expect(r.message).toMatch(/correlation 1 between 'CL' and 'V' would make one a copy of the other/);
    }
    // Semi-definite without a ±1: three variables at −0.5 each sum to zero (pivot 0).
    const s = correlationFactor(Float64Array.from([1, -0.5, -0.5, -0.5, 1, -0.5, -0.5, -0.5, 1]), 3, names);
    expect(s.ok).toBe(false);
  });

  it('refuses a matrix that is not a correlation matrix', () => {
    expect(correlationFactor(Float64Array.from([2, 0, 0, 1]), 2, names).ok).toBe(false);
    expect(correlationFactor(Float64Array.from([1, 0.2, 0.3, 1]), 2, names).ok).toBe(false);
    expect(correlationFactor(Float64Array.from([1, 1.2, 1.2, 1]), 2, names).ok).toBe(false);
  });
});

describe('correlate', () => {
  it('turns SubjectRandom normals into draws with the asked correlation (N = 20,000, 4 standard errors)', () => {
    const a = [[1, 0.7, -0.4], [0.7, 1, -0.1], [-0.4, -0.1, 1]];
    const n = 3;
    const l = factorOf(a);
    const N = 20_000;
    const z = new Float64Array(n);
    const x = new Float64Array(n);
    const sums = new Float64Array(n * n);
    for (let s = 0; s < N; s++) {
      const r = new SubjectRandom(777, s);
      for (let k = 0; k < n; k++) z[k] = r.normal(0, k);
      correlate(l, n, z, x);
      for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) sums[i * n + j] += x[i] * x[j];
    }
    for (let i = 0; i < n; i++) {
      for (let j = 0; j < i; j++) {
        const rho = a[i][j];
        const sample = sums[i * n + j] / Math.sqrt(sums[i * n + i] * sums[j * n + j]);
        // Large-sample standard error of a correlation coefficient, (1 − ρ²)/√N (Fisher).
        expect(Math.abs(sample - rho)).toBeLessThan((4 * (1 - rho * rho)) / Math.sqrt(N));
      }
    }
  });

  it('may write over its input', () => {
    const l = factorOf([[1, 0.5], [0.5, 1]]);
    const z = Float64Array.of(0.3, -1.2);
    const out = new Float64Array(2);
    correlate(l, 2, z, out);
    correlate(l, 2, z, z);
    expect(Array.from(z)).toEqual(Array.from(out));
  });
});
