/**
 * Append-only record of accepted steps with their continuous extensions, so that any
 * time in the simulated span can be evaluated after the run (peaks, threshold crossings,
 * output times) without re-integrating.
 */

/** How a method's stored coefficient vectors give y(t0 + θh), θ ∈ [0, 1]. */
export interface DenseForm {
  /** Number of length-n coefficient vectors stored per step. */
  readonly vectors: number;
  /** Writes y(t0 + θh) into out, reading the step's vectors at coef[offset + v*n + i]. */
  evaluate(theta: number, coef: Float64Array, offset: number, n: number, out: Float64Array): void;
}

/** A state trajectory that can be evaluated at any time within [start, end]. */
export interface Trajectory {
  readonly dimension: number;
  readonly start: number;
  readonly end: number;
  /**
   * Writes the state at t into out. At a discontinuity (a bolus), `side` chooses the
   * limit from the left (before the jump) or from the right (after it).
   */
  stateAt(t: number, side: 'left' | 'right', out: Float64Array): void;
  /**
   * Ascending times close enough together that the state is smooth and (in practice)
   * has at most one turning point between two of them: the solver's steps, or a
   * subdivision of each exact piece.
   */
  knots(): Float64Array;
  /** States at ascending times, side per row (0 = left limit, 1 = right limit), passed to write in order. */
  sample(times: Float64Array, sides: Uint8Array, write: (row: number, state: Float64Array) => void): void;
}

/**
 * Cubic Hermite form from y0, y1 and the slopes; any one-step or multistep method can
 * use it. Stored as (y0, y1 − y0, h·f0 − Δ, Δ − h·f1 − (h·f0 − Δ)) — the first four
 * vectors of Hairer's DOPRI5 continuous extension (Hairer, Nørsett & Wanner, Solving
 * ODEs I, §II.6), which this form reproduces when the fifth vector is zero.
 */
export const hermiteForm: DenseForm = {
  vectors: 4,
  evaluate(theta, coef, offset, n, out) {
    const t1 = 1 - theta;
    for (let i = 0; i < n; i++) {
      const o = offset + i;
      out[i] = coef[o] + theta * (coef[o + n] + t1 * (coef[o + 2 * n] + theta * coef[o + 3 * n]));
    }
  },
};

/** Fills the four Hermite vectors for a step of size h from (y0, f0) to (y1, f1). */
export function hermiteCoefficients(
  h: number,
  y0: Float64Array,
  f0: Float64Array,
  y1: Float64Array,
  f1: Float64Array,
  out: Float64Array,
): void {
  const n = y0.length;
  for (let i = 0; i < n; i++) {
    const delta = y1[i] - y0[i];
    const b = h * f0[i] - delta;
    out[i] = y0[i];
    out[n + i] = delta;
    out[2 * n + i] = b;
    out[3 * n + i] = delta - h * f1[i] - b;
  }
}

/**
 * Coefficients live in fixed-size chunks, so growing never copies what is stored. 64 KiB
 * chunks stay below the size at which the allocator maps fresh pages from the system (and
 * the kernel zero-fills them page by page), which made 512 KiB chunks cost more than the
 * steps written into them.
 */
const chunkSize = 1 << 13;

export class DenseStore implements Trajectory {
  readonly dimension: number;
  private t0s: Float64Array;
  private hs: Float64Array;
  /** Chunk index and offset within it of each step's coefficients. */
  private chunkOf: Int32Array;
  private offsets: Int32Array;
  private forms: DenseForm[] = [];
  private readonly chunks: Float64Array[] = [];
  private count = 0;
  private used = chunkSize;

  constructor(dimension: number, expectedSteps = 256) {
    this.dimension = dimension;
    this.t0s = new Float64Array(expectedSteps);
    this.hs = new Float64Array(expectedSteps);
    this.chunkOf = new Int32Array(expectedSteps);
    this.offsets = new Int32Array(expectedSteps);
  }

  get steps(): number {
    return this.count;
  }

  get start(): number {
    return this.count === 0 ? NaN : this.t0s[0];
  }

  get end(): number {
    return this.count === 0 ? NaN : this.t0s[this.count - 1] + this.hs[this.count - 1];
  }

  /** Records one accepted step on [t0, t0 + h]; `coef` holds form.vectors × n values. */
  append(t0: number, h: number, form: DenseForm, coef: Float64Array): void {
    const size = form.vectors * this.dimension;
    const at = this.reserve(size);
    const target = this.openChunk;
    for (let i = 0; i < size; i++) target[at + i] = coef[i];
    this.commit(t0, h, form, size);
  }

  /**
   * Room for the next step's `size` coefficients: returns the offset in openChunk where a
   * solver may write them before commit(). Writing without committing is harmless (a
   * rejected step): the next reservation reuses the place.
   */
  reserve(size: number): number {
    if (this.used + size > chunkSize) {
      this.chunks.push(new Float64Array(Math.max(chunkSize, size)));
      this.used = 0;
    }
    return this.used;
  }

  /** The chunk that reserve() points into. */
  get openChunk(): Float64Array {
    return this.chunks[this.chunks.length - 1];
  }

  /** Records the step on [t0, t0 + h] whose `size` coefficients were written at the reserved offset. */
  commit(t0: number, h: number, form: DenseForm, size: number): void {
    if (this.count === this.t0s.length) this.growSteps();
    this.t0s[this.count] = t0;
    this.hs[this.count] = h;
    this.chunkOf[this.count] = this.chunks.length - 1;
    this.offsets[this.count] = this.used;
    this.forms[this.count] = form;
    this.used += size;
    this.count++;
  }

  stateAt(t: number, side: 'left' | 'right', out: Float64Array): void {
    this.evaluateStep(this.locate(t, side), t, out);
  }

  private evaluateStep(k: number, t: number, out: Float64Array): void {
    const h = this.hs[k];
    const theta = h > 0 ? Math.min(1, Math.max(0, (t - this.t0s[k]) / h)) : 0;
    this.forms[k].evaluate(theta, this.chunks[this.chunkOf[k]], this.offsets[k], this.dimension, out);
  }

  /** Rows in ascending time: walks the steps forward instead of searching for each row. */
  sample(times: Float64Array, sides: Uint8Array, write: (row: number, state: Float64Array) => void): void {
    const y = new Float64Array(this.dimension);
    let k = 0;
    const last = this.count - 1;
    for (let row = 0; row < times.length; row++) {
      const t = times[row];
      if (sides[row] === 0) {
        // Last step whose start is < t.
        while (k < last && this.t0s[k + 1] < t) k++;
      } else {
        while (k < last && this.t0s[k + 1] <= t) k++;
      }
      this.evaluateStep(k, t, y);
      write(row, y);
    }
  }

  knots(): Float64Array {
    const out = new Float64Array(this.count + 1);
    for (let k = 0; k < this.count; k++) out[k] = this.t0s[k];
    out[this.count] = this.end;
    return out;
  }

  /** Index of the step that holds t, preferring the earlier step at a shared boundary when side is 'left'. */
  private locate(t: number, side: 'left' | 'right'): number {
    let lo = 0;
    let hi = this.count - 1;
    if (hi < 0) throw new RangeError('empty trajectory');
    // Last step whose start is < t (left) or <= t (right).
    while (lo < hi) {
      const mid = (lo + hi + 1) >>> 1;
      const s = this.t0s[mid];
      if (side === 'left' ? s < t : s <= t) lo = mid;
      else hi = mid - 1;
    }
    return lo;
  }

  private growSteps(): void {
    const size = this.t0s.length * 2;
    const grow = <T extends Float64Array | Int32Array>(a: T, b: T): T => {
      b.set(a);
      return b;
    };
    this.t0s = grow(this.t0s, new Float64Array(size));
    this.hs = grow(this.hs, new Float64Array(size));
    this.chunkOf = grow(this.chunkOf, new Int32Array(size));
    this.offsets = grow(this.offsets, new Int32Array(size));
  }
}
