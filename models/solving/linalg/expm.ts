/**
 * Matrix exponential by scaling and squaring with diagonal Padé approximants, and the
 * step propagator of a linear compartment system under a constant input rate.
 *
 * Degree selection follows Higham (2005), "The scaling and squaring method for the
 * matrix exponential revisited", SIAM J. Matrix Anal. Appl. 26(4):1179–1193, Alg. 2.3.
 */

import { matMul, norm1 } from './dense.ts';
import { luFactor, luSolveMatrix } from './lu.ts';

/** Padé degrees tried in order of cost (Higham 2005, Alg. 2.3). */
export const PADE_DEGREES: readonly number[] = [3, 5, 7, 9, 13];

/** θ_m: largest ‖A‖₁ for which r_m(A) meets unit roundoff 2^-53 in backward error (Higham 2005, Table 2.3). */
export const PADE_THETA: Readonly<Record<number, number>> = {
  3: 1.495585217958292e-2,
  5: 2.539398330063230e-1,
  7: 9.504178996162932e-1,
  9: 2.097847961257068e0,
  13: 5.371920351148152e0,
};

/** Numerator coefficients b_0..b_m of r_m, scaled so b_m = 1 (Higham 2005, eq. 2.11 and Alg. 2.3). */
export const PADE_COEFFICIENTS: Readonly<Record<number, readonly number[]>> = {
  3: [120, 60, 12, 1],
  5: [30240, 15120, 3360, 420, 30, 1],
  7: [17297280, 8648640, 1995840, 277200, 25200, 1512, 56, 1],
  9: [17643225600, 8821612800, 2075673600, 302702400, 30270240, 2162160, 110880, 3960, 90, 1],
  13: [
    64764752532480000, 32382376266240000, 7771770303897600, 1187353796428800, 129060195264000,
    10559470521600, 670442572800, 33522128640, 1323241920, 40840800, 960960, 16380, 182, 1,
  ],
};

/** Buffers reused across calls so that repeated exponentials do not allocate. */
export interface ExpmWorkspace {
  /** Compartment dimension the workspace was made for. */
  readonly n: number;
  /** Largest matrix the core exponential accepts (2n, room for the block forms). */
  readonly capacity: number;
  readonly a: Float64Array;
  readonly a2: Float64Array;
  readonly a4: Float64Array;
  readonly a6: Float64Array;
  readonly a8: Float64Array;
  readonly t: Float64Array;
  readonly u: Float64Array;
  readonly v: Float64Array;
  readonly p: Float64Array;
  readonly q: Float64Array;
  readonly aug: Float64Array;
  readonly augOut: Float64Array;
  readonly piv: Int32Array;
}

/** Workspace for systems of dimension up to n (expm and propagator on n×n, expmIntegral's 2n×2n block form). */
export function createExpmWorkspace(n: number): ExpmWorkspace {
  if (!Number.isInteger(n) || n < 1) throw new RangeError(`workspace dimension must be a positive integer, got ${n}`);
  const capacity = 2 * n;
  const size = capacity * capacity;
  const buf = (): Float64Array => new Float64Array(size);
  return {
    n,
    capacity,
    a: buf(),
    a2: buf(),
    a4: buf(),
    a6: buf(),
    a8: buf(),
    t: buf(),
    u: buf(),
    v: buf(),
    p: buf(),
    q: buf(),
    aug: buf(),
    augOut: buf(),
    piv: new Int32Array(capacity),
  };
}

function checkCapacity(ws: ExpmWorkspace, dim: number): void {
  if (dim > ws.capacity) {
    throw new RangeError(`expm workspace holds matrices up to ${ws.capacity}×${ws.capacity}, needed ${dim}×${dim}`);
  }
}

/** out = (accumulate ? out : 0) + cI·I + c2·A² + c4·A⁴ + c6·A⁶ + c8·A⁸, skipping zero coefficients. */
function evenCombination(
  out: Float64Array,
  n: number,
  ws: ExpmWorkspace,
  accumulate: boolean,
  cI: number,
  c2: number,
  c4: number,
  c6: number,
  c8: number,
): void {
  const len = n * n;
  if (!accumulate) out.fill(0, 0, len);
  if (c2 !== 0) for (let k = 0; k < len; k++) out[k] += c2 * ws.a2[k];
  if (c4 !== 0) for (let k = 0; k < len; k++) out[k] += c4 * ws.a4[k];
  if (c6 !== 0) for (let k = 0; k < len; k++) out[k] += c6 * ws.a6[k];
  if (c8 !== 0) for (let k = 0; k < len; k++) out[k] += c8 * ws.a8[k];
  for (let i = 0; i < n; i++) out[i * n + i] += cI;
}

function coef(b: readonly number[], k: number): number {
  return k < b.length ? b[k] : 0;
}

/**
 * Writes U (odd part) into ws.u and V (even part) into ws.v of the degree-m Padé
 * numerator p_m(A) = V + U, so that q_m(A) = V − U. Even powers are shared between U
 * and V to save products (Higham 2005, eqs. 2.11 and 2.13, Alg. 2.3).
 */
function padeParts(n: number, m: number, ws: ExpmWorkspace): void {
  const { a, a2, a4, a6, a8, t, u, v } = ws;
  const b = PADE_COEFFICIENTS[m];
  matMul(a, a, n, a2);
  if (m >= 5) matMul(a2, a2, n, a4);
  if (m >= 7) matMul(a4, a2, n, a6);
  if (m === 9) matMul(a4, a4, n, a8);
  if (m <= 9) {
    evenCombination(t, n, ws, false, b[1], b[3], coef(b, 5), coef(b, 7), coef(b, 9));
    matMul(a, t, n, u);
    evenCombination(v, n, ws, false, b[0], b[2], coef(b, 4), coef(b, 6), coef(b, 8));
    return;
  }
  // Degree 13: U = A[A6(b13A6 + b11A4 + b9A2) + b7A6 + b5A4 + b3A2 + b1I], V likewise with even b's.
  evenCombination(t, n, ws, false, 0, b[9], b[11], b[13], 0);
  matMul(a6, t, n, v);
  evenCombination(v, n, ws, true, b[1], b[3], b[5], b[7], 0);
  matMul(a, v, n, u);
  evenCombination(t, n, ws, false, 0, b[8], b[10], b[12], 0);
  matMul(a6, t, n, v);
  evenCombination(v, n, ws, true, b[0], b[2], b[4], b[6], 0);
}

/** Core of Higham (2005) Alg. 2.3 on a dim×dim matrix src; writes e^src into out. src may be ws.aug. */
function expmInto(src: Float64Array, dim: number, out: Float64Array, ws: ExpmWorkspace): void {
  checkCapacity(ws, dim);
  const norm = norm1(src, dim);
  if (!Number.isFinite(norm)) throw new RangeError('expm: matrix has non-finite entries');
  const len = dim * dim;
  const { a, p, q, t, u, v, piv } = ws;
  for (let k = 0; k < len; k++) a[k] = src[k];

  let m = 13;
  let s = 0;
  for (const deg of PADE_DEGREES) {
    if (deg !== 13 && norm <= PADE_THETA[deg]) {
      m = deg;
      break;
    }
  }
  if (m === 13 && norm > PADE_THETA[13]) {
    s = Math.ceil(Math.log2(norm / PADE_THETA[13]));
    // A power of two, so the scaling itself adds no rounding error.
    const scale = Math.pow(2, -s);
    for (let k = 0; k < len; k++) a[k] *= scale;
  }

  padeParts(dim, m, ws);
  for (let k = 0; k < len; k++) {
    p[k] = v[k] + u[k];
    q[k] = v[k] - u[k];
  }
  // q_m(A) is well conditioned for ‖A‖₁ ≤ θ_m (Higham 2005, §2), so failure means corrupted input.
  if (!luFactor(q, dim, piv)) throw new Error('expm: Padé denominator is singular');
  luSolveMatrix(q, dim, piv, p, dim);

  let cur = p;
  let spare = t;
  for (let i = 0; i < s; i++) {
    matMul(cur, cur, dim, spare);
    const tmp = cur;
    cur = spare;
    spare = tmp;
  }
  for (let k = 0; k < len; k++) out[k] = cur[k];
}

/**
 * e^A for an n×n row-major A, written into out (must not be a workspace buffer).
 * Allocates out and a workspace when they are omitted.
 */
export function expm(
  a: Float64Array,
  n: number,
  out: Float64Array = new Float64Array(n * n),
  ws: ExpmWorkspace = createExpmWorkspace(n),
): Float64Array {
  expmInto(a, n, out, ws);
  return out;
}

/** One step of a linear system x' = Mx + r: x(t+h) = Φ x(t) + g. */
export interface Propagator {
  /** Φ = e^{Mh}, n×n row-major. */
  readonly phi: Float64Array;
  /** g = ∫₀ʰ e^{Ms} ds · r, the response to the constant input rate r over the step. */
  readonly g: Float64Array;
}

export function createPropagator(n: number): Propagator {
  return { phi: new Float64Array(n * n), g: new Float64Array(n) };
}

/**
 * Power of two near target/value, so that rescaling a column by it is exact; keeps the
 * input column from dominating ‖·‖₁ of the block matrix and forcing needless squarings.
 */
function balancingPower(target: number, value: number): number {
  const e = Math.round(Math.log2(target / value));
  return Math.pow(2, Math.max(-1000, Math.min(1000, e)));
}

/** Zeroes the dim×dim block matrix and writes M·h into its top-left n×n corner. */
function placeScaledBlock(m: Float64Array, n: number, h: number, aug: Float64Array, dim: number): void {
  aug.fill(0, 0, dim * dim);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) aug[i * dim + j] = m[i * n + j] * h;
  }
}

/**
 * Φ = e^{Mh} and g = ∫₀ʰ e^{Ms} ds · r from one exponential of the block matrix
 * [[Mh, c·rh], [0, 0]], whose top-right column is c·g (Van Loan 1978, "Computing
 * integrals involving the matrix exponential", IEEE TAC 23(3), Thm. 1). Exact for
 * singular M (no inversion of M). r = null means no input: g is zero.
 */
export function propagator(
  m: Float64Array,
  n: number,
  h: number,
  r: Float64Array | null,
  ws: ExpmWorkspace,
  out: Propagator = createPropagator(n),
): Propagator {
  const { aug, augOut } = ws;
  let rNorm = 0;
  if (r !== null) for (let i = 0; i < n; i++) rNorm += Math.abs(r[i] * h);
  if (!Number.isFinite(rNorm)) throw new RangeError('propagator: non-finite input rate or step');

  if (r === null || rNorm === 0) {
    for (let k = 0; k < n * n; k++) aug[k] = m[k] * h;
    expmInto(aug, n, out.phi, ws);
    out.g.fill(0, 0, n);
    return out;
  }

  const dim = n + 1;
  checkCapacity(ws, dim);
  placeScaledBlock(m, n, h, aug, dim);
  const aNorm = norm1(aug, dim);
  const c = balancingPower(aNorm > 0 ? aNorm : 1, rNorm);
  for (let i = 0; i < n; i++) aug[i * dim + n] = r[i] * h * c;

  expmInto(aug, dim, augOut, ws);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) out.phi[i * n + j] = augOut[i * dim + j];
    out.g[i] = augOut[i * dim + n] / c;
  }
  return out;
}

/**
 * ∫₀ʰ e^{Ms} ds (n×n) from the 2n×2n block exponential of [[Mh, cI], [0, 0]], whose
 * top-right block is c·φ₁(Mh) with ∫₀ʰ e^{Ms} ds = h·φ₁(Mh) (Van Loan 1978, Thm. 1).
 */
export function expmIntegral(
  m: Float64Array,
  n: number,
  h: number,
  out: Float64Array = new Float64Array(n * n),
  ws: ExpmWorkspace = createExpmWorkspace(n),
): Float64Array {
  const dim = 2 * n;
  checkCapacity(ws, dim);
  const { aug, augOut } = ws;
  placeScaledBlock(m, n, h, aug, dim);
  const aNorm = norm1(aug, dim);
  if (!Number.isFinite(aNorm) || !Number.isFinite(h)) throw new RangeError('expmIntegral: non-finite matrix or step');
  if (h === 0) return out.fill(0, 0, n * n);
  const c = balancingPower(aNorm > 0 ? aNorm : 1, 1);
  for (let i = 0; i < n; i++) aug[i * dim + n + i] = c;

  expmInto(aug, dim, augOut, ws);
  const factor = h / c;
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) out[i * n + j] = augOut[i * dim + n + j] * factor;
  }
  return out;
}

/** e^{Mh} without the caller forming Mh (the workspace's scratch holds it). */
export function expmScaled(
  m: Float64Array,
  n: number,
  h: number,
  out: Float64Array = new Float64Array(n * n),
  ws: ExpmWorkspace = createExpmWorkspace(n),
): Float64Array {
  checkCapacity(ws, n);
  const { aug } = ws;
  for (let k = 0; k < n * n; k++) aug[k] = m[k] * h;
  expmInto(aug, n, out, ws);
  return out;
}

/**
 * Workspaces and propagator scratch by dimension, shared by every caller in this thread: each
 * is scratch within one synchronous call (no call nests another), and a population makes new
 * propagator caches for every subject, where allocating fresh buffers cost more than the
 * exponentials themselves.
 */
const sharedWorkspaces = new Map<number, ExpmWorkspace>();
const sharedScratch = new Map<number, Propagator>();

export function sharedExpmWorkspace(n: number): ExpmWorkspace {
  let ws = sharedWorkspaces.get(n);
  if (!ws) sharedWorkspaces.set(n, (ws = createExpmWorkspace(n)));
  return ws;
}

export function sharedPropagatorScratch(n: number): Propagator {
  let p = sharedScratch.get(n);
  if (!p) sharedScratch.set(n, (p = createPropagator(n)));
  return p;
}
