/**
 * Small symmetric matrices of a fit (p × p, row-major Float64Array, p ≤ 20): the normal
 * equations' Cholesky solve and inverse, and the eigenvalues by the cyclic Jacobi method
 * (Golub & Van Loan, Matrix Computations, 4th ed., §8.5), for the condition number.
 */

/** Cholesky factor of symmetric A (lower, in place of a copy); null when A is not positive definite. */
export function choleskyOf(a: Float64Array, n: number): Float64Array | null {
  const l = new Float64Array(n * n);
  for (let j = 0; j < n; j++) {
    let pivot = a[j * n + j];
    for (let k = 0; k < j; k++) pivot -= l[j * n + k] * l[j * n + k];
    if (!(pivot > 0)) return null;
    const d = Math.sqrt(pivot);
    l[j * n + j] = d;
    for (let i = j + 1; i < n; i++) {
      let sum = a[i * n + j];
      for (let k = 0; k < j; k++) sum -= l[i * n + k] * l[j * n + k];
      l[i * n + j] = sum / d;
    }
  }
  return l;
}

/** Solves L·Lᵀ·x = b, in place in b. */
export function choleskySolve(l: Float64Array, n: number, b: Float64Array): void {
  for (let i = 0; i < n; i++) {
    let sum = b[i];
    for (let k = 0; k < i; k++) sum -= l[i * n + k] * b[k];
    b[i] = sum / l[i * n + i];
  }
  for (let i = n - 1; i >= 0; i--) {
    let sum = b[i];
    for (let k = i + 1; k < n; k++) sum -= l[k * n + i] * b[k];
    b[i] = sum / l[i * n + i];
  }
}

/** A⁻¹ of symmetric positive definite A; null when it is not. */
export function inverseSpd(a: Float64Array, n: number): Float64Array | null {
  const l = choleskyOf(a, n);
  if (!l) return null;
  const inv = new Float64Array(n * n);
  const col = new Float64Array(n);
  for (let j = 0; j < n; j++) {
    col.fill(0);
    col[j] = 1;
    choleskySolve(l, n, col);
    for (let i = 0; i < n; i++) inv[i * n + j] = col[i];
  }
  return inv;
}

/** Eigenvalues and eigenvectors (columns of `vectors`) of symmetric A by cyclic Jacobi rotations. */
export function symmetricEigen(a: Float64Array, n: number): { values: Float64Array; vectors: Float64Array } {
  const m = Float64Array.from(a);
  const v = new Float64Array(n * n);
  for (let i = 0; i < n; i++) v[i * n + i] = 1;
  for (let sweep = 0; sweep < 60; sweep++) {
    let off = 0;
    for (let i = 0; i < n; i++) for (let j = i + 1; j < n; j++) off += m[i * n + j] * m[i * n + j];
    if (off === 0 || !Number.isFinite(off)) break;
    for (let p = 0; p < n; p++) {
      for (let q = p + 1; q < n; q++) {
        const apq = m[p * n + q];
        if (apq === 0) continue;
        // The rotation that zeroes a_pq (Golub & Van Loan, Algorithm 8.5.1, the symmetric Schur step).
        const tau = (m[q * n + q] - m[p * n + p]) / (2 * apq);
        const t = Math.sign(tau || 1) / (Math.abs(tau) + Math.sqrt(1 + tau * tau));
        const c = 1 / Math.sqrt(1 + t * t);
        const s = t * c;
        for (let k = 0; k < n; k++) {
          const mkp = m[k * n + p];
          const mkq = m[k * n + q];
          m[k * n + p] = c * mkp - s * mkq;
          m[k * n + q] = s * mkp + c * mkq;
        }
        for (let k = 0; k < n; k++) {
          const mpk = m[p * n + k];
          const mqk = m[q * n + k];
          m[p * n + k] = c * mpk - s * mqk;
          m[q * n + k] = s * mpk + c * mqk;
        }
        for (let k = 0; k < n; k++) {
          const vkp = v[k * n + p];
          const vkq = v[k * n + q];
          v[k * n + p] = c * vkp - s * vkq;
          v[k * n + q] = s * vkp + c * vkq;
        }
      }
    }
  }
  const values = new Float64Array(n);
  for (let i = 0; i < n; i++) values[i] = m[i * n + i];
  return { values, vectors: v };
}

/** JᵀJ (p × p) of J (n × p, row-major). */
export function normalMatrix(j: Float64Array, n: number, p: number): Float64Array {
  const a = new Float64Array(p * p);
  for (let r = 0; r < n; r++) {
    for (let x = 0; x < p; x++) {
      const jx = j[r * p + x];
      if (jx === 0) continue;
      for (let y = 0; y <= x; y++) a[x * p + y] += jx * j[r * p + y];
    }
  }
  for (let x = 0; x < p; x++) for (let y = 0; y < x; y++) a[y * p + x] = a[x * p + y];
  return a;
}
