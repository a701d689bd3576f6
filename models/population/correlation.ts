/**
 * Correlated between-subject effects: the Cholesky factor L of a correlation matrix (so that
 * L·z has that correlation when z is independent standard normal), and, when the matrix is
 * not positive definite, the one correlation most likely to be the mistake, named in words.
 */

/** A pivot at or below this counts as zero: the matrix is then only semi-definite, and refused. */
const PIVOT_FLOOR = 1e-12;

/**
 * Cholesky–Banachiewicz, row by row, into `factor` (row-major n×n, upper part zero). Returns
 * the first row whose pivot is not above PIVOT_FLOOR (the leading block of size row + 1 is
 * then not positive definite), or −1. Only the first `rows` rows are factored.
 */
function choleskyRows(a: Float64Array, n: number, rows: number, factor: Float64Array): number {
  factor.fill(0);
  for (let j = 0; j < rows; j++) {
    for (let i = 0; i < j; i++) {
      let sum = a[j * n + i];
      for (let k = 0; k < i; k++) sum -= factor[j * n + k] * factor[i * n + k];
      factor[j * n + i] = sum / factor[i * n + i];
    }
    let pivot = a[j * n + j];
    for (let k = 0; k < j; k++) pivot -= factor[j * n + k] * factor[j * n + k];
    if (!(pivot > PIVOT_FLOOR)) return j;
    factor[j * n + j] = Math.sqrt(pivot);
  }
  return -1;
}

/** Whether the leading block of size j + 1 is positive definite once correlation (i, j) is set to 0. */
function blockHoldsWithout(a: Float64Array, n: number, i: number, j: number, work: Float64Array, scratch: Float64Array): boolean {
  work.set(a);
  work[i * n + j] = 0;
  work[j * n + i] = 0;
  return choleskyRows(work, n, j + 1, scratch) < 0;
}

/**
 * The pair to blame when the block of size j + 1 fails: among correlations (i, j), i < j,
 * whose removal makes the block positive definite, the largest in size; if none does, the
 * largest in size in row j. A correlation of exactly ±1 is blamed first: it is never allowed.
 */
function blamedPair(a: Float64Array, n: number, j: number): number {
  for (let i = 0; i < j; i++) if (Math.abs(a[j * n + i]) >= 1) return i;
  const work = new Float64Array(n * n);
  const scratch = new Float64Array(n * n);
  let best = -1;
  for (let i = 0; i < j; i++) {
    const size = Math.abs(a[j * n + i]);
    if (size === 0 || !blockHoldsWithout(a, n, i, j, work, scratch)) continue;
    if (best < 0 || size > Math.abs(a[j * n + best])) best = i;
  }
  return best >= 0 ? best : largestInRow(a, n, j);
}

function largestInRow(a: Float64Array, n: number, j: number): number {
  let at = 0;
  for (let i = 1; i < j; i++) if (Math.abs(a[j * n + i]) > Math.abs(a[j * n + at])) at = i;
  return at;
}

function blameMessage(value: number, first: string, second: string): string {
  if (Math.abs(value) >= 1) {
    return `the correlation ${value} between '${first}' and '${second}' would make one a copy of the other, ` +
      `which is not allowed (the matrix must be positive definite); use a value strictly between -1 and 1`;
  }
  return `the correlation ${value} between '${first}' and '${second}' cannot hold together with the others ` +
    `(the matrix is not positive definite); lower it or another correlation of '${second}'`;
}

type Refusal = { ok: false; pair: [number, number]; message: string };

/** Ones on the diagonal, symmetry and values within [−1, 1]: the first breach, or null. */
function shapeProblem(a: Float64Array, n: number, names: readonly string[]): Refusal | null {
  for (let j = 0; j < n; j++) {
    if (a[j * n + j] !== 1) {
      return { ok: false, pair: [j, j], message: `the correlation of '${names[j]}' with itself must be 1, not ${a[j * n + j]}` };
    }
    for (let i = 0; i < j; i++) {
      const v = a[j * n + i];
      if (!(Math.abs(v) <= 1)) {
        return { ok: false, pair: [i, j], message: `the correlation between '${names[i]}' and '${names[j]}' must lie between -1 and 1, not ${v}` };
      }
      if (a[i * n + j] !== v) {
        return { ok: false, pair: [i, j], message: `the correlation between '${names[i]}' and '${names[j]}' is given as both ${a[i * n + j]} and ${v}` };
      }
    }
  }
  return null;
}

/**
 * Lower-triangular Cholesky factor (row-major n×n) of a symmetric correlation matrix, or the
 * pair (i, j), i < j, that stops it being positive definite, with a message in plain words.
 */
export function correlationFactor(matrix: Float64Array, n: number, names: readonly string[]):
  { ok: true; factor: Float64Array } | { ok: false; pair: [number, number]; message: string } {
  const shape = shapeProblem(matrix, n, names);
  if (shape) return shape;
  const factor = new Float64Array(n * n);
  const failed = choleskyRows(matrix, n, n, factor);
  if (failed < 0) return { ok: true, factor };
  const i = blamedPair(matrix, n, failed);
  return { ok: false, pair: [i, failed], message: blameMessage(matrix[failed * n + i], names[i], names[failed]) };
}

/**
 * out = L·z for the lower-triangular factor L. Rows are formed from the last up, each reading
 * only z[0..i], so `out` may be `z` itself.
 */
export function correlate(factor: Float64Array, n: number, z: Float64Array, out: Float64Array): void {
  for (let i = n - 1; i >= 0; i--) {
    let sum = 0;
    for (let k = 0; k <= i; k++) sum += factor[i * n + k] * z[k];
    out[i] = sum;
  }
}
