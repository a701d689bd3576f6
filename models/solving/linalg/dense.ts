/**
 * Small dense matrix helpers. Matrices are row-major Float64Array with an explicit
 * dimension n (entry (i, j) at a[i*n + j]); outputs are caller-owned so that hot
 * paths never allocate.
 */

/** Writes the n×n identity into out (allocated when omitted). */
export function identity(n: number, out: Float64Array = new Float64Array(n * n)): Float64Array {
  out.fill(0, 0, n * n);
  for (let i = 0; i < n; i++) out[i * n + i] = 1;
  return out;
}

/** out ← a·b. out must not alias a or b, since rows of out are written while a and b are still read. */
export function matMul(a: Float64Array, b: Float64Array, n: number, out: Float64Array): Float64Array {
  for (let i = 0; i < n; i++) {
    const ri = i * n;
    out.fill(0, ri, ri + n);
    // i-k-j order walks b and out by rows, which is cache-friendly for row-major storage.
    for (let k = 0; k < n; k++) {
      const aik = a[ri + k];
      if (aik === 0) continue;
      const rk = k * n;
      for (let j = 0; j < n; j++) out[ri + j] += aik * b[rk + j];
    }
  }
  return out;
}

/** out ← a·x. out must not alias x. */
export function matVec(a: Float64Array, n: number, x: Float64Array, out: Float64Array): Float64Array {
  for (let i = 0; i < n; i++) {
    const ri = i * n;
    let s = 0;
    for (let j = 0; j < n; j++) s += a[ri + j] * x[j];
    out[i] = s;
  }
  return out;
}

/** Maximum absolute column sum ‖a‖₁ — the norm Higham's θ_m thresholds are stated in. */
export function norm1(a: Float64Array, n: number): number {
  let best = 0;
  for (let j = 0; j < n; j++) {
    let s = 0;
    for (let i = 0; i < n; i++) s += Math.abs(a[i * n + j]);
    // NaN must propagate so callers can detect non-finite input.
    if (s > best || Number.isNaN(s)) best = s;
  }
  return best;
}

/** Maximum absolute row sum ‖a‖∞. */
export function normInf(a: Float64Array, n: number): number {
  let best = 0;
  for (let i = 0; i < n; i++) {
    let s = 0;
    for (let j = 0; j < n; j++) s += Math.abs(a[i * n + j]);
    if (s > best || Number.isNaN(s)) best = s;
  }
  return best;
}

/** Largest |a_ij|. */
export function maxAbs(a: Float64Array, n: number): number {
  let best = 0;
  for (let k = 0; k < n * n; k++) {
    const v = Math.abs(a[k]);
    if (v > best || Number.isNaN(v)) best = v;
  }
  return best;
}

/** Copies the n×n matrix src into out (allocated when omitted). */
export function copyMatrix(src: Float64Array, n: number, out: Float64Array = new Float64Array(n * n)): Float64Array {
  for (let k = 0; k < n * n; k++) out[k] = src[k];
  return out;
}

/** Copies the first len entries of src into out (allocated when omitted). */
export function copyVector(src: Float64Array, len: number, out: Float64Array = new Float64Array(len)): Float64Array {
  for (let k = 0; k < len; k++) out[k] = src[k];
  return out;
}

/** Builds a row-major Float64Array from nested rows (convenience for tests and set-up code). */
export function fromRows(rows: ReadonlyArray<ReadonlyArray<number>>): Float64Array {
  const n = rows.length;
  const out = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    const row = rows[i];
    if (row.length !== n) throw new RangeError(`row ${i} has ${row.length} entries, expected ${n}`);
    for (let j = 0; j < n; j++) out[i * n + j] = row[j];
  }
  return out;
}
