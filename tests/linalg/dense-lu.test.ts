import { describe, expect, test } from 'vitest';
import fc from 'fast-check';
import { det, multiply, norm } from 'mathjs';
import { copyMatrix, fromRows, identity, matMul, matVec, norm1, normInf } from '../../models/solving/linalg/dense.ts';
import { luFactor, luSolve, luSolveMatrix, solveLinear } from '../../models/solving/linalg/lu.ts';
import { fromMathjs, mathjsMatrix, mixedMatrix, U } from './helpers.ts';

describe('dense helpers', () => {
  test('matMul and matVec agree with mathjs multiply', () => {
    fc.assert(
      fc.property(mixedMatrix(1, 7, -3, 2), mixedMatrix(1, 7, -3, 2), (x, y) => {
        const n = Math.min(x.n, y.n);
        const a = x.m.subarray(0, n * n);
        const b = y.m.subarray(0, n * n);
        const ours = matMul(a, b, n, new Float64Array(n * n));
        const ref = fromMathjs(multiply(mathjsMatrix(a, n), mathjsMatrix(b, n)), n);
        // Each entry is an n-term dot product: |error| ≤ n·u·Σ|a_ik||b_kj| ≤ n·u·‖A‖∞‖B‖₁ (Higham, ASNA §3.5); both sides obey it.
        const tol = 2 * n * U * normInf(a, n) * norm1(b, n);
        for (let k = 0; k < n * n; k++) expect(Math.abs(ours[k] - ref[k])).toBeLessThanOrEqual(tol);
        const v = b.subarray(0, n);
        const mv = matVec(a, n, v, new Float64Array(n));
        const mvRef = multiply(mathjsMatrix(a, n), Array.from(v)).toArray() as number[];
        for (let i = 0; i < n; i++) expect(Math.abs(mv[i] - mvRef[i])).toBeLessThanOrEqual(tol + 1e-300);
      }),
      { numRuns: 200 },
    );
  });

  test('norm1 equals mathjs norm(A, 1); identity is neutral for matMul', () => {
    const a = fromRows([
      [1, -7, 2],
      [-3, 4, 0.5],
      [2, 1, -9],
    ]);
    // mathjs norm(A, 1) is the maximum absolute column sum: max(6, 12, 11.5) = 12.
    expect(norm1(a, 3)).toBe(norm(mathjsMatrix(a, 3), 1));
    expect(norm1(a, 3)).toBe(12);
    expect(normInf(a, 3)).toBe(12);
    const out = matMul(identity(3), a, 3, new Float64Array(9));
    expect(Array.from(out)).toEqual(Array.from(a)); // exact: products with 1 and 0 are exact
    expect(Array.from(copyMatrix(a, 3))).toEqual(Array.from(a));
  });
});

describe('LU with partial pivoting', () => {
  test('solve residual is at backward-error level on random mixed-scale systems', () => {
    fc.assert(
      fc.property(mixedMatrix(1, 10, -3, 3), fc.array(
          // Subnormal right-hand sides are flushed: their absolute rounding (2⁻¹⁰⁷⁴) is not a relative backward error.
          fc.double({ min: -10, max: 10, noNaN: true }).map((x) => (Math.abs(x) < 1e-300 ? 0 : x)),
          { minLength: 10, maxLength: 10 },
        ), ({ n, m }, bs) => {
        const b = Float64Array.from(bs.slice(0, n));
        const x = solveLinear(m, n, b);
        // Independent singularity reference: mathjs det; skip (numerically) singular draws.
        const d = det(toNested(m, n)) as number;
        fc.pre(x !== null && Math.abs(d) > 0);
        if (x === null) return;
        const r = matVec(m, n, x, new Float64Array(n));
        let xn = 0;
        for (let i = 0; i < n; i++) xn = Math.max(xn, Math.abs(x[i]));
        // Backward stability of GEPP (Higham, ASNA Thm. 9.4): ‖b − Ax‖∞ ≤ c·n·u·ρ·‖A‖∞‖x‖∞; growth ρ is small in practice, c·ρ ≤ 8 is generous for n ≤ 10.
        const tol = 8 * n * U * normInf(m, n) * xn + 8 * n * U * Math.max(...bs.slice(0, n).map(Math.abs));
        for (let i = 0; i < n; i++) expect(Math.abs(r[i] - b[i])).toBeLessThanOrEqual(tol);
      }),
      { numRuns: 300 },
    );
  });

  test('needs pivoting: zero leading entry, closed-form solution', () => {
    // [[0,1],[1,0]] x = [2,3] has x = [3,2] (closed form: the matrix is its own inverse).
    const x = solveLinear(fromRows([[0, 1], [1, 0]]), 2, new Float64Array([2, 3]));
    expect(x).not.toBeNull();
    expect(Array.from(x ?? [])).toEqual([3, 2]);
  });

  test('reports singular matrices (exactly and to working precision)', () => {
    const piv = new Int32Array(3);
    // Rank 2: row 3 = row 1 + row 2 (mathjs det = 0).
    const a = fromRows([
      [1, 2, 3],
      [4, 5, 6],
      [5, 7, 9],
    ]);
    expect(det(toNested(a, 3))).toBeCloseTo(0, 12);
    expect(luFactor(copyMatrix(a, 3), 3, piv)).toBe(false);
    expect(solveLinear(a, 3, new Float64Array([1, 1, 1]))).toBeNull();
    // Singular to working precision: det = 2⁻⁵² exactly, so the last pivot (2⁻⁵²) is below the n·ε·max|a| = 2⁻⁵¹ threshold.
    const b = fromRows([
      [1, 1],
      [1, 1 + Number.EPSILON],
    ]);
    expect(luFactor(copyMatrix(b, 2), 2, new Int32Array(2))).toBe(false);
    expect(luFactor(new Float64Array(4), 2, new Int32Array(2))).toBe(false);
    expect(luFactor(new Float64Array([1, NaN, 0, 1]), 2, new Int32Array(2))).toBe(false);
  });

  test('luSolveMatrix equals column-by-column luSolve (same operations, same rounding order)', () => {
    const a = fromRows([
      [2, -1, 0, 3],
      [1e-3, 4, 1, 0],
      [0, 7, -2, 1],
      [5, 0, 1, 1e2],
    ]);
    const n = 4;
    const lu = copyMatrix(a, n);
    const piv = new Int32Array(n);
    expect(luFactor(lu, n, piv)).toBe(true);
    const bm = new Float64Array(n * n);
    for (let k = 0; k < n * n; k++) bm[k] = Math.sin(k + 1);
    const cols = copyMatrix(bm, n);
    luSolveMatrix(lu, n, piv, bm, n);
    for (let j = 0; j < n; j++) {
      const col = new Float64Array(n);
      for (let i = 0; i < n; i++) col[i] = cols[i * n + j];
      luSolve(lu, n, piv, col);
      for (let i = 0; i < n; i++) expect(bm[i * n + j]).toBeCloseTo(col[i], 13);
    }
    // And A·X = B to backward-error level (reference: the right-hand side itself), same bound as above.
    const ax = matMul(a, bm, n, new Float64Array(n * n));
    const xMax = Math.max(...Array.from(bm, Math.abs));
    for (let k = 0; k < n * n; k++) expect(Math.abs(ax[k] - cols[k])).toBeLessThanOrEqual(8 * n * U * (normInf(a, n) * xMax + 1));
  });
});

function toNested(a: Float64Array, n: number): number[][] {
  const rows: number[][] = [];
  for (let i = 0; i < n; i++) rows.push(Array.from(a.subarray(i * n, i * n + n)));
  return rows;
}
