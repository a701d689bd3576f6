/**
 * All eigenvalues of a small general real matrix: balancing, Householder reduction to
 * upper Hessenberg form, then the Francis implicit double-shift QR iteration with
 * deflation (Golub & Van Loan, Matrix Computations, 4th ed., Algs. 7.4.2, 7.5.1, 7.5.2).
 * Intended for n ≤ 40; cost is O(n³).
 */

const EPS = Number.EPSILON;
/** Iterations allowed per eigenvalue before giving up; typical convergence takes 2–4 (Golub & Van Loan §7.5.6). */
const MAX_ITER_PER_EIGENVALUE = 60;

export interface Eigenvalues {
  /** Real parts, sorted descending (the slowest-decaying mode of a compartment matrix first). */
  readonly re: Float64Array;
  /** Imaginary parts; a complex pair appears as adjacent entries, positive imaginary part first. */
  readonly im: Float64Array;
}

export interface EigenWorkspace {
  readonly n: number;
  /** Working copy reduced in place to Hessenberg and then quasi-triangular form. */
  readonly h: Float64Array;
  /** Householder vector (length max(n, 3)). */
  readonly v: Float64Array;
}

export function createEigenWorkspace(n: number): EigenWorkspace {
  if (!Number.isInteger(n) || n < 1) throw new RangeError(`eigen workspace dimension must be a positive integer, got ${n}`);
  return { n, h: new Float64Array(n * n), v: new Float64Array(Math.max(n, 3)) };
}

export function createEigenvalues(n: number): Eigenvalues {
  return { re: new Float64Array(n), im: new Float64Array(n) };
}

/** Thrown when the QR iteration does not converge (practically only for NaN input). */
export class EigenvalueConvergenceError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'EigenvalueConvergenceError';
  }
}

/**
 * Eigenvalues of the n×n row-major matrix a (not modified), sorted by real part
 * descending, ties by imaginary part descending.
 */
export function eigenvalues(
  a: Float64Array,
  n: number,
  ws: EigenWorkspace = createEigenWorkspace(n),
  out: Eigenvalues = createEigenvalues(n),
): Eigenvalues {
  if (ws.n < n) throw new RangeError(`eigen workspace holds ${ws.n}×${ws.n}, needed ${n}×${n}`);
  const h = ws.h;
  for (let k = 0; k < n * n; k++) {
    if (!Number.isFinite(a[k])) throw new RangeError('eigenvalues: matrix has non-finite entries');
    h[k] = a[k];
  }
  const [lo, hi] = balance(h, n);
  hessenberg(h, n, lo, hi, ws.v);
  francisQr(h, n, out.re, out.im, ws.v);
  sortDescending(out.re, out.im, n);
  return out;
}

function swapRowCol(h: Float64Array, n: number, i: number, j: number): void {
  if (i === j) return;
  for (let k = 0; k < n; k++) {
    const t = h[i * n + k];
    h[i * n + k] = h[j * n + k];
    h[j * n + k] = t;
  }
  for (let k = 0; k < n; k++) {
    const t = h[k * n + i];
    h[k * n + i] = h[k * n + j];
    h[k * n + j] = t;
  }
}

/** True when row r has no nonzero off-diagonal entry in columns lo..hi. */
function rowIsolated(h: Float64Array, n: number, r: number, lo: number, hi: number): boolean {
  for (let j = lo; j <= hi; j++) if (j !== r && h[r * n + j] !== 0) return false;
  return true;
}

/** True when column c has no nonzero off-diagonal entry in rows lo..hi. */
function columnIsolated(h: Float64Array, n: number, c: number, lo: number, hi: number): boolean {
  for (let i = lo; i <= hi; i++) if (i !== c && h[i * n + c] !== 0) return false;
  return true;
}

/**
 * Parlett–Reinsch balancing (Numer. Math. 13 (1969) 293–304, as in EISPACK balanc):
 * permutations isolate eigenvalues that are already exposed — e.g. 0 for a compartment
 * with no exit — then power-of-two diagonal scaling equalises row and column norms,
 * which matters when rates span many decades. Returns the active range [lo, hi].
 */
function balance(h: Float64Array, n: number): [number, number] {
  let lo = 0;
  let hi = n - 1;
  let found = true;
  while (found && hi > 0) {
    found = false;
    for (let r = hi; r >= 0; r--) {
      if (rowIsolated(h, n, r, 0, hi)) {
        swapRowCol(h, n, r, hi);
        hi--;
        found = true;
        break;
      }
    }
  }
  found = true;
  while (found && lo < hi) {
    found = false;
    for (let c = lo; c <= hi; c++) {
      if (columnIsolated(h, n, c, lo, hi)) {
        swapRowCol(h, n, c, lo);
        lo++;
        found = true;
        break;
      }
    }
  }

  const radix = 2;
  const radix2 = radix * radix;
  let noConvergence = true;
  while (noConvergence) {
    noConvergence = false;
    for (let i = lo; i <= hi; i++) {
      let c = 0;
      let r = 0;
      for (let j = lo; j <= hi; j++) {
        if (j === i) continue;
        c += Math.abs(h[j * n + i]);
        r += Math.abs(h[i * n + j]);
      }
      if (c === 0 || r === 0) continue;
      let g = r / radix;
      let f = 1;
      const s = c + r;
      while (c < g) {
        f *= radix;
        c *= radix2;
      }
      g = r * radix;
      while (c >= g) {
        f /= radix;
        c /= radix2;
      }
      if ((c + r) / f < 0.95 * s) {
        noConvergence = true;
        // Diagonal similarity D⁻¹HD with D_ii = f; powers of two keep it exact.
        for (let j = 0; j < n; j++) h[i * n + j] /= f;
        for (let j = 0; j < n; j++) h[j * n + i] *= f;
      }
    }
  }
  return [lo, hi];
}

/**
 * Reflector P = I − β v vᵀ with P x = α e₁ for x = v[0..len-1] (overwritten by v).
 * Returns β; 0 means x already has the form and P = I.
 */
function householder(v: Float64Array, len: number): number {
  let scale = 0;
  for (let k = 0; k < len; k++) scale = Math.max(scale, Math.abs(v[k]));
  if (scale === 0) return 0;
  let tail = 0;
  for (let k = 1; k < len; k++) {
    const x = v[k] / scale;
    tail += x * x;
  }
  if (tail === 0) return 0;
  const x0 = v[0] / scale;
  const norm = Math.sqrt(x0 * x0 + tail) * scale;
  // Sign chosen so v[0] = x0 + sign(x0)‖x‖ suffers no cancellation.
  const alpha = x0 >= 0 ? -norm : norm;
  v[0] -= alpha;
  let vv = 0;
  for (let k = 0; k < len; k++) vv += v[k] * v[k];
  return 2 / vv;
}

/** Householder reduction of rows/columns lo..hi to upper Hessenberg form (Golub & Van Loan Alg. 7.4.2). */
function hessenberg(h: Float64Array, n: number, lo: number, hi: number, v: Float64Array): void {
  for (let j = lo; j < hi - 1; j++) {
    const len = hi - j;
    for (let k = 0; k < len; k++) v[k] = h[(j + 1 + k) * n + j];
    const beta = householder(v, len);
    if (beta === 0) continue;
    // Left: rows j+1..hi, columns j..n-1.
    for (let col = j; col < n; col++) {
      let s = 0;
      for (let k = 0; k < len; k++) s += v[k] * h[(j + 1 + k) * n + col];
      s *= beta;
      for (let k = 0; k < len; k++) h[(j + 1 + k) * n + col] -= s * v[k];
    }
    // Right: rows 0..hi, columns j+1..hi.
    for (let row = 0; row <= hi; row++) {
      let s = 0;
      for (let k = 0; k < len; k++) s += h[row * n + j + 1 + k] * v[k];
      s *= beta;
      for (let k = 0; k < len; k++) h[row * n + j + 1 + k] -= s * v[k];
    }
    for (let k = 2; k <= len; k++) h[(j + k) * n + j] = 0;
  }
}

/**
 * Eigenvalues of [[a, b], [c, d]] as mid ± z. When both real roots share a sign and
 * one is much smaller (a slow and a fast rate in one block), mid − z cancels, so the
 * small root is taken from the product λ₁λ₂ = ad − bc instead — the stable quadratic
 * formula (Higham, Accuracy and Stability of Numerical Algorithms, 2nd ed., §1.8).
 * Otherwise mid ± z is kept: it preserves the trace of nearly defective pairs, whose
 * product formula would divide rounding noise by a tiny root.
 */
function twoByTwo(a: number, b: number, c: number, d: number, re: Float64Array, im: Float64Array, k: number): void {
  const mid = 0.5 * (a + d);
  const p = 0.5 * (a - d);
  const w = b * c;
  const q = p * p + w;
  if (q < 0) {
    const z = Math.sqrt(-q);
    re[k] = mid;
    re[k + 1] = mid;
    im[k] = z;
    im[k + 1] = -z;
    return;
  }
  const z = Math.sqrt(q);
  const big = mid >= 0 ? mid + z : mid - z;
  let small = mid >= 0 ? mid - z : mid + z;
  const absMid = Math.abs(mid);
  // Same-sign roots with |small| < |big|/3: the subtraction mid ∓ z may lose more than the
  // product does — unless ad − bc cancels as well (a nearly defective pair near zero). Take
  // whichever has the smaller relative rounding error: about (|ad| + |bc|)/|ad − bc| for the
  // product, |big|/|small| for the subtraction.
  if (z > 0.5 * absMid && z < absMid) {
    const ad = a * d;
    const product = ad - w;
    const fromProduct = product / big;
    const productError = (Math.abs(ad) + Math.abs(w)) / Math.abs(product);
    const subtractionError = Math.abs(big) / Math.abs(small);
    if (Math.abs(fromProduct) <= Math.abs(big) && productError < subtractionError) small = fromProduct;
  }
  re[k] = big;
  re[k + 1] = small;
  im[k] = 0;
  im[k + 1] = 0;
}

/**
 * Applies P = I − β v vᵀ (v of length len, rows r0..r0+len-1) from the left to columns
 * c0..c1 and from the right (columns r0..) to rows rr0..rr1 of h.
 */
function applyReflector(
  h: Float64Array,
  n: number,
  v: Float64Array,
  beta: number,
  len: number,
  r0: number,
  c0: number,
  c1: number,
  rr0: number,
  rr1: number,
): void {
  for (let col = c0; col <= c1; col++) {
    let s = 0;
    for (let k = 0; k < len; k++) s += v[k] * h[(r0 + k) * n + col];
    s *= beta;
    for (let k = 0; k < len; k++) h[(r0 + k) * n + col] -= s * v[k];
  }
  for (let row = rr0; row <= rr1; row++) {
    let s = 0;
    for (let k = 0; k < len; k++) s += h[row * n + r0 + k] * v[k];
    s *= beta;
    for (let k = 0; k < len; k++) h[row * n + r0 + k] -= s * v[k];
  }
}

/**
 * One implicit double-shift step on the unreduced block lo..hi whose shifts are the
 * roots of z² − sum·z + prod (Golub & Van Loan Alg. 7.5.1). Only the block is updated:
 * eigenvalues alone do not need the off-block parts of the Schur form.
 */
function francisStep(
  h: Float64Array,
  n: number,
  lo: number,
  hi: number,
  sum: number,
  prod: number,
  v: Float64Array,
): void {
  const h00 = h[lo * n + lo];
  const h10 = h[(lo + 1) * n + lo];
  // First column of (H − σ₁I)(H − σ₂I), which has only three nonzeros (Golub & Van Loan eq. 7.5.6).
  let x = h00 * h00 + h[lo * n + lo + 1] * h10 - sum * h00 + prod;
  let y = h10 * (h00 + h[(lo + 1) * n + lo + 1] - sum);
  let z = h10 * h[(lo + 2) * n + lo + 1];
  for (let k = lo - 1; k <= hi - 3; k++) {
    v[0] = x;
    v[1] = y;
    v[2] = z;
    const beta = householder(v, 3);
    if (beta !== 0) {
      const c0 = Math.max(lo, k);
      const rr1 = Math.min(k + 4, hi);
      applyReflector(h, n, v, beta, 3, k + 1, c0, hi, lo, rr1);
    }
    x = h[(k + 2) * n + k + 1];
    y = h[(k + 3) * n + k + 1];
    if (k < hi - 3) z = h[(k + 4) * n + k + 1];
  }
  v[0] = x;
  v[1] = y;
  const beta = householder(v, 2);
  if (beta !== 0) applyReflector(h, n, v, beta, 2, hi - 1, hi - 2, hi, lo, hi);
}

/** Deflating QR iteration on a Hessenberg matrix (Golub & Van Loan Alg. 7.5.2); eigenvalues into re, im. */
function francisQr(h: Float64Array, n: number, re: Float64Array, im: Float64Array, v: Float64Array): void {
  let norm = 0;
  for (let k = 0; k < n * n; k++) norm = Math.max(norm, Math.abs(h[k]));
  let hi = n - 1;
  let iter = 0;
  while (hi >= 0) {
    let l = hi;
    while (l > 0) {
      const sub = Math.abs(h[l * n + l - 1]);
      let diag = Math.abs(h[l * n + l]) + Math.abs(h[(l - 1) * n + l - 1]);
      if (diag === 0) diag = norm;
      if (sub <= EPS * diag) {
        h[l * n + l - 1] = 0;
        break;
      }
      l--;
    }
    if (l === hi) {
      re[hi] = h[hi * n + hi];
      im[hi] = 0;
      hi--;
      iter = 0;
      continue;
    }
    if (l === hi - 1) {
      twoByTwo(h[l * n + l], h[l * n + hi], h[hi * n + l], h[hi * n + hi], re, im, l);
      hi -= 2;
      iter = 0;
      continue;
    }
    iter++;
    if (iter > MAX_ITER_PER_EIGENVALUE) {
      throw new EigenvalueConvergenceError(`QR iteration did not converge for eigenvalue ${hi}`);
    }
    let sum: number;
    let prod: number;
    if (iter % 10 === 0) {
      // Exceptional shift breaks cycles of the standard shift (EISPACK hqr's ad hoc choice).
      const c = h[hi * n + hi];
      const e = Math.abs(h[hi * n + hi - 1]) + Math.abs(h[(hi - 1) * n + hi - 2]);
      sum = 2 * c + 1.5 * e;
      prod = c * c + 1.5 * e * c + e * e;
    } else {
      const a = h[(hi - 1) * n + hi - 1];
      const b = h[(hi - 1) * n + hi];
      const c = h[hi * n + hi - 1];
      const d = h[hi * n + hi];
      sum = a + d;
      prod = a * d - b * c;
    }
    francisStep(h, n, l, hi, sum, prod, v);
  }
}

/** Insertion sort of (re, im) pairs: real part descending, then imaginary part descending. */
function sortDescending(re: Float64Array, im: Float64Array, n: number): void {
  for (let i = 1; i < n; i++) {
    const r = re[i];
    const m = im[i];
    let j = i - 1;
    while (j >= 0 && (re[j] < r || (re[j] === r && im[j] < m))) {
      re[j + 1] = re[j];
      im[j + 1] = im[j];
      j--;
    }
    re[j + 1] = r;
    im[j + 1] = m;
  }
}
