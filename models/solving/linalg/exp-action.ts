/**
 * The action of the matrix exponential on a vector, without forming e^{Mh}: the state of
 * x' = Mx + u after a time h, x(h) = e^{Mh}·x0 + h·φ₁(Mh)·u, by a truncated Taylor series
 * in s sub-steps with ‖M‖∞·h/s ≤ ½ (Al-Mohy & Higham, "Computing the action of the matrix
 * exponential", SIAM J. Sci. Comput. 33 (2011) 488–511, with a fixed sub-step bound in
 * place of their parameter selection).
 *
 * With ‖A‖ ≤ ½ the series of degree m leaves a remainder below ‖A‖^{m+1}/(m+1)! · e^{½}:
 * under 1e-19 (relative to the norm of the state) at m = 16, below rounding. The terms are
 * summed until each component's term is below unit roundoff of its own sum (at most 20).
 * Cost: a few sparse matrix–vector products per sub-step, against the O(n³) of a Padé
 * exponential: cheaper when the time is wanted once, as in locating a peak or a crossing.
 */
export interface ExpActionWork {
  readonly term: Float64Array;
  readonly next: Float64Array;
  readonly sum: Float64Array;
}

export function createExpActionWork(n: number): ExpActionWork {
  return { term: new Float64Array(n), next: new Float64Array(n), sum: new Float64Array(n) };
}

/**
 * A matrix by its nonzero entries, row by row (compressed sparse rows): a compartment model's
 * matrix is mostly zeros (a transfer fills two entries, an AUC row one), and the Taylor terms
 * are its products with vectors, so only the nonzeros are multiplied, in the order of the dense
 * product (the same sums, a zero term aside).
 */
export interface SparseRows {
  readonly rowStart: Int32Array;
  readonly cols: Int32Array;
  readonly vals: Float64Array;
}

/** The nonzero entries of the n×n row-major matrix m. */
export function sparseRows(m: Float64Array, n: number): SparseRows {
  let count = 0;
  for (let k = 0; k < n * n; k++) if (m[k] !== 0) count++;
  const rowStart = new Int32Array(n + 1);
  const cols = new Int32Array(count);
  const vals = new Float64Array(count);
  let e = 0;
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) {
      const v = m[i * n + j];
      if (v === 0) continue;
      cols[e] = j;
      vals[e++] = v;
    }
    rowStart[i + 1] = e;
  }
  return { rowStart, cols, vals };
}

/** Largest sub-step norm ‖M‖∞·δ. */
const SUBSTEP_NORM = 0.5;
/** Most Taylor terms per sub-step (the remainder bound above is met by 16). */
const MAX_TERMS = 20;
const UNIT_ROUNDOFF = 2 ** -53;

/**
 * out ← e^{Mh}·x + h·φ₁(Mh)·u (u null: no input), M n×n by its nonzeros (sparseRows) with
 * ‖M‖∞ = normM (normInf of dense.ts, computed once by the caller). out may not alias x.
 */
export function expAction(
  m: SparseRows,
  n: number,
  normM: number,
  h: number,
  x: Float64Array,
  u: Float64Array | null,
  out: Float64Array,
  work: ExpActionWork,
): void {
  const { term, next, sum } = work;
  const { rowStart, cols, vals } = m;
  const steps = Math.max(1, Math.ceil((normM * h) / SUBSTEP_NORM));
  const delta = h / steps;
  for (let i = 0; i < n; i++) out[i] = x[i];
  for (let s = 0; s < steps; s++) {
    // First term: δ·(M·x + u); then T_k = (δ/k)·M·T_{k−1}.
    for (let i = 0; i < n; i++) {
      let acc = u ? u[i] : 0;
      for (let e = rowStart[i]; e < rowStart[i + 1]; e++) acc += vals[e] * out[cols[e]];
      term[i] = delta * acc;
      sum[i] = out[i] + term[i];
    }
    for (let k = 2; k <= MAX_TERMS; k++) {
      const factor = delta / k;
      for (let i = 0; i < n; i++) {
        let acc = 0;
        for (let e = rowStart[i]; e < rowStart[i + 1]; e++) acc += vals[e] * term[cols[e]];
        next[i] = factor * acc;
      }
      // Component by component: a small amount beside a large one (an effect compartment of
      // negligible volume beside the central one) must converge on its own scale.
      let converged = true;
      for (let i = 0; i < n; i++) {
        term[i] = next[i];
        sum[i] += next[i];
        if (Math.abs(next[i]) > UNIT_ROUNDOFF * Math.abs(sum[i])) converged = false;
      }
      if (converged) break;
    }
    for (let i = 0; i < n; i++) out[i] = sum[i];
  }
}

