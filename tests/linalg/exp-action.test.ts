/**
 * expAction (the action of the matrix exponential, with a constant input) against
 * mathjs's `expm` as an independent library: x(h) of x' = Mx + u is the last column block
 * of the exponential of the augmented matrix [[M, u], [0, 0]] applied to [x0; 1]
 * (Van Loan, "Computing integrals involving the matrix exponential", IEEE Trans. Autom.
 * Control 23 (1978) 395–404).
 */
import fc from 'fast-check';
import { expm as mathjsExpm, matrix } from 'mathjs';
import { describe, expect, test } from 'vitest';
import { normInf } from '../../models/solving/linalg/dense.ts';
import { createExpActionWork, expAction, sparseRows } from '../../models/solving/linalg/exp-action.ts';
import { compartmentMatrix, logRate, U } from './helpers.ts';

/** x(h) by mathjs: e^{[[Mh, uh], [0, 0]]}·[x0; 1]. */
function reference(m: Float64Array, n: number, h: number, x: Float64Array, u: Float64Array): Float64Array {
  const rows: number[][] = [];
  for (let i = 0; i < n; i++) rows.push([...Array.from(m.subarray(i * n, (i + 1) * n), (v) => v * h), u[i] * h]);
  rows.push(new Array<number>(n + 1).fill(0));
  const e = (mathjsExpm(matrix(rows)).toArray() as number[][]);
  return Float64Array.from({ length: n }, (_, i) => {
    let s = e[i][n];
    for (let j = 0; j < n; j++) s += e[i][j] * x[j];
    return s;
  });
}

function maxRelative(a: Float64Array, b: Float64Array): number {
  const scale = Math.max(...Array.from(b, Math.abs), 1e-300);
  let worst = 0;
  for (let i = 0; i < a.length; i++) worst = Math.max(worst, Math.abs(a[i] - b[i]) / scale);
  return worst;
}

describe('expAction against mathjs expm of the augmented matrix', () => {
  test('random compartment matrices, inputs and times: within 4096·max(1, ‖Mh‖∞)·u of the largest component', () => {
    // The policy of expm.test.ts: the problem's condition is about ‖Mh‖ (exactly |x| for the scalar e^x),
    // and both methods are stable — Padé scaling and squaring (Higham 2005, §3) and Taylor sub-steps
    // of norm ½ whose rounding adds up over ‖Mh‖/½ sub-steps — so the constant absorbs rounding of
    // both: measured ≤ 525 over 3000 random cases, so 4096 leaves an 8× margin.
    const worst: number[] = [];
    fc.assert(
      fc.property(
        compartmentMatrix(1, 7, -2, 1),
        logRate(-2, 1.5),
        fc.float64Array({ minLength: 7, maxLength: 7, min: 0, max: 1000, noNaN: true }),
        fc.float64Array({ minLength: 7, maxLength: 7, min: 0, max: 50, noNaN: true }),
        ({ n, m }, h, x7, u7) => {
          const x = x7.slice(0, n);
          const u = u7.slice(0, n);
          const out = new Float64Array(n);
          expAction(sparseRows(m, n), n, normInf(m, n), h, x, u, out, createExpActionWork(n));
          const e = maxRelative(out, reference(m, n, h, x, u));
          worst.push(e);
          expect(e).toBeLessThan(4096 * Math.max(1, normInf(m, n) * h) * U);
        },
      ),
      { numRuns: 300 },
    );
    expect(Math.max(...worst)).toBeGreaterThan(0); // the comparison is not vacuous
  });

  test('a two-compartment decay over many time constants, without input (‖M‖h = 60)', () => {
    const m = Float64Array.from([-1.5, 0.3, 1.2, -0.3]);
    const x = Float64Array.of(100, 0);
    const out = new Float64Array(2);
    expAction(sparseRows(m, 2), 2, normInf(m, 2), 40, x, null, out, createExpActionWork(2));
    const ref = reference(m, 2, 40, x, new Float64Array(2));
    expect(maxRelative(out, ref)).toBeLessThan(1e-12);
    expect(out[1]).toBeGreaterThan(0);
  });

  test('h = 0 returns the state itself; a zero state with an input integrates the input', () => {
    const m = Float64Array.from([-2]);
    const out = new Float64Array(1);
    expAction(sparseRows(m, 1), 1, 2, 0, Float64Array.of(3), Float64Array.of(5), out, createExpActionWork(1));
    expect(out[0]).toBe(3);
    // x' = −2x + 5 from 0: x(h) = 2.5·(1 − e^{−2h}) (common practice: infusion build-up).
    expAction(sparseRows(m, 1), 1, 2, 0.7, Float64Array.of(0), Float64Array.of(5), out, createExpActionWork(1));
    expect(Math.abs(out[0] - 2.5 * -Math.expm1(-1.4)) / out[0]).toBeLessThan(64 * U);
  });
});
