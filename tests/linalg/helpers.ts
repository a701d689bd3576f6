/** Shared generators and comparisons for the linear-algebra tests. */
import fc from 'fast-check';
import { matrix } from 'mathjs';
import type { Matrix } from 'mathjs';

export const U = Number.EPSILON / 2; // unit roundoff 2^-53

/** Row-major Float64Array → nested arrays for mathjs. */
export function toRows(a: Float64Array, n: number): number[][] {
  const rows: number[][] = [];
  for (let i = 0; i < n; i++) rows.push(Array.from(a.subarray(i * n, i * n + n)));
  return rows;
}

/** mathjs Matrix or nested array → row-major Float64Array. */
export function fromMathjs(m: Matrix | number[][], n: number): Float64Array {
  const rows = (Array.isArray(m) ? m : (m.toArray() as number[][]));
  const out = new Float64Array(n * n);
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) out[i * n + j] = rows[i][j];
  return out;
}

export function mathjsMatrix(a: Float64Array, n: number): Matrix {
  return matrix(toRows(a, n));
}

export function norm1Of(a: Float64Array, n: number): number {
  let best = 0;
  for (let j = 0; j < n; j++) {
    let s = 0;
    for (let i = 0; i < n; i++) s += Math.abs(a[i * n + j]);
    best = Math.max(best, s);
  }
  return best;
}

/** ‖x − ref‖₁ / ‖ref‖₁ for n×n matrices (absolute when ref is zero). */
export function relDiff1(x: Float64Array, ref: Float64Array, n: number): number {
  const d = new Float64Array(n * n);
  for (let k = 0; k < n * n; k++) d[k] = x[k] - ref[k];
  const r = norm1Of(ref, n);
  return r > 0 ? norm1Of(d, n) / r : norm1Of(d, n);
}

/** Number of squarings Higham (2005) Alg. 2.3 performs for ‖A‖₁ = norm. */
export function squarings(norm: number): number {
  const theta13 = 5.371920351148152;
  return norm > theta13 ? Math.ceil(Math.log2(norm / theta13)) : 0;
}

/** A rate in [10^lo, 10^hi] per hour, uniform in its exponent (rates span decades). */
export function logRate(lo: number, hi: number): fc.Arbitrary<number> {
  return fc.double({ min: lo, max: hi, noNaN: true }).map((e) => Math.pow(10, e));
}

export interface Compartmental {
  n: number;
  m: Float64Array;
}

/**
 * Random compartment matrix: nonnegative transfer rates k_ij (from j to i), some
 * absent, and an elimination rate per compartment that may be absent (a compartment
 * with no exit makes M singular). Diagonal = −(all outflows of the compartment).
 */
export function compartmentMatrix(
  minN: number,
  maxN: number,
  lo: number,
  hi: number,
  allowClosed = true,
): fc.Arbitrary<Compartmental> {
  return fc.integer({ min: minN, max: maxN }).chain((n) => {
    const flow = fc.oneof(fc.constant(0), logRate(lo, hi), logRate(lo, hi));
    const exit = allowClosed ? fc.oneof(fc.constant(0), logRate(lo, hi), logRate(lo, hi)) : logRate(lo, hi);
    return fc
      .record({
        flows: fc.array(flow, { minLength: n * n, maxLength: n * n }),
        exits: fc.array(exit, { minLength: n, maxLength: n }),
      })
      .map(({ flows, exits }) => {
        const m = new Float64Array(n * n);
        for (let j = 0; j < n; j++) {
          let out = exits[j];
          for (let i = 0; i < n; i++) {
            if (i === j) continue;
            m[i * n + j] = flows[i * n + j];
            out += flows[i * n + j];
          }
          m[j * n + j] = -out;
        }
        return { n, m };
      });
  });
}

/** General real matrix with entries of mixed sign and scale: ±10^e, e ∈ [lo, hi], some zeros. */
export function mixedMatrix(minN: number, maxN: number, lo: number, hi: number): fc.Arbitrary<Compartmental> {
  return fc.integer({ min: minN, max: maxN }).chain((n) => {
    const entry = fc.oneof(
      fc.constant(0),
      fc.tuple(fc.boolean(), logRate(lo, hi)).map(([neg, v]) => (neg ? -v : v)),
      fc.tuple(fc.boolean(), logRate(lo, hi)).map(([neg, v]) => (neg ? -v : v)),
    );
    return fc.array(entry, { minLength: n * n, maxLength: n * n }).map((xs) => ({ n, m: Float64Array.from(xs) }));
  });
}
