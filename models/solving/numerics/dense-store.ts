/**
 * Append-only record of accepted steps with their continuous extensions, so that any
 * time in the simulated span can be evaluated after the run (peaks, threshold crossings,
 * output times) without re-integrating.
 */

import { IntegrationFailure } from './ode-system';

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
   * subdivision of each exact piece. With `from` and `to`, only those within [from, to]
   * (the pieces outside are not visited).
   */
  knots(from?: number, to?: number): Float64Array;
  /** States at ascending times, side per row (0 = left limit, 1 = right limit), passed to write in order. */
  sample(times: Float64Array, sides: Uint8Array, write: (row: number, state: Float64Array) => void): void;
  /**
   * sample() for concentrations only: out[b·stride + row] = state[picks[b]] / volumes[b] (a
   * compartment's concentration), with no call per row — a population's hourly grid.
   */
  sampleInto(times: Float64Array, sides: Uint8Array, picks: Int32Array, volumes: Float64Array, out: Float32Array, stride: number): void;
}

/**
 * Cubic Hermite form from y0, y1 and the slopes; any one-step or multistep method can
 * use it. Stored as (y0, y1 − y0, h·f0 − Δ, Δ − h·f1 − (h·f0 − Δ)) — the first four
 * vectors of Hairer's DOPRI5 continuous extension (Hairer, Nørsett & Wanner, Solving
 * ODEs I, §II.6), which this form reproduces when the fifth vector is zero.
 *
 * Its first two vectors alone are the straight line from y0 to y1, its first three the
 * quadratic through y0, y1 with slope f0 at y0 (tableau.ts, alternatingForm(2) and (3)):
 * what the first- and second-order fixed-step methods keep (their `hermiteVectors`).
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

/**
 * Fills the first `vectors` (2, 3 or 4) of the Hermite vectors for a step of size h from
 * (y0, f0) to (y1, f1); f1 is read only for the fourth.
 */
export function hermiteCoefficients(
  h: number,
  y0: Float64Array,
  f0: Float64Array,
  y1: Float64Array,
  f1: Float64Array,
  out: Float64Array,
  vectors = 4,
): void {
  const n = y0.length;
  for (let i = 0; i < n; i++) {
    const delta = y1[i] - y0[i];
    out[i] = y0[i];
    out[n + i] = delta;
    if (vectors < 3) continue;
    const b = h * f0[i] - delta;
    out[2 * n + i] = b;
    if (vectors < 4) continue;
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

/**
 * Chunks of released stores, kept for the next store in this thread (at most 32 MB): memory
 * first touched costs about 3 ms per MB on these machines (the kernel maps and zero-fills each
 * page), so a virtual population, which solves a new span for every subject, reuses the pages
 * of the subject before. A released store is emptied, so evaluating it afterwards fails loudly.
 */
const freeChunks: Float64Array[] = [];
const MAX_FREE_CHUNKS = (32 * 2 ** 20) / (8 * chunkSize);

/** Step-record blocks of released stores, likewise (at most 64 blocks: 64k steps, 1.6 MB). */
interface RecordBlock {
  t0: Float64Array;
  h: Float64Array;
  chunk: Int32Array;
  offset: Int32Array;
  form: Uint8Array;
}
const freeBlocks: RecordBlock[] = [];
const MAX_FREE_BLOCKS = 64;

/** Gives a trajectory's storage back for reuse, when it has any (the dense store); the trajectory must not be used again. */
export function releaseTrajectory(t: Trajectory): void {
  if (t instanceof DenseStore) t.release();
}

/**
 * Step records (start, length, chunk, offset, form) live in blocks of this many steps, for
 * the same reason: a store that grew by doubling held up to twice the records it needed and,
 * while copying, three times.
 */
const blockBits = 10;
const blockSteps = 1 << blockBits;
const blockMask = blockSteps - 1;
/** Bytes of one step record: start and length (8 B each), chunk and offset (4 B each), form index (1 B). */
export const STEP_RECORD_BYTES = 8 + 8 + 4 + 4 + 1;
const blockBytes = blockSteps * STEP_RECORD_BYTES;

/**
 * Ceiling on one store's bytes (coefficients and step records), 1 GiB. The store lives
 * outside the JavaScript heap, where nothing else bounds it: without a ceiling a tiny fixed
 * step or a tight tolerance over a long span grows it until the machine runs out of memory
 * (16.8 million Euler steps once took 6.1 GB). 1 GiB holds 12 million Euler steps of a
 * four-state model (two vectors each, 89 B), or 650,000 DOPRI5 steps (five vectors) of a
 * 20-compartment model with 41 states (1665 B each).
 */
export const DENSE_STORE_MAX_BYTES = 2 ** 30;

/** "1 GiB", "512 KiB", "3.2 GiB": bytes in binary units, for messages. */
export function formatBytes(bytes: number): string {
  const units = ['B', 'KiB', 'MiB', 'GiB', 'TiB'];
  let v = bytes;
  let u = 0;
  while (v >= 1024 && u < units.length - 1) {
    v /= 1024;
    u++;
  }
  return `${Number(v.toPrecision(3))} ${units[u]}`;
}

export class DenseStore implements Trajectory {
  readonly dimension: number;
  /** Ceiling on bytes(); reaching it is an IntegrationFailure 'too-much-memory'. */
  readonly maxBytes: number;
  /** Step records by block: step k is entry k & blockMask of block k >> blockBits. */
  private readonly t0Blocks: Float64Array[] = [];
  private readonly hBlocks: Float64Array[] = [];
  private readonly chunkBlocks: Int32Array[] = [];
  private readonly offsetBlocks: Int32Array[] = [];
  private readonly formBlocks: Uint8Array[] = [];
  /** Start of each block's first step, for the first level of locate(). */
  private blockFirsts = new Float64Array(16);
  /** The distinct forms used, indexed by the step records' form index. */
  private readonly forms: DenseForm[] = [];
  private lastForm: DenseForm | null = null;
  private lastFormIndex = 0;
  private readonly chunks: Float64Array[] = [];
  private count = 0;
  private used = chunkSize;
  private allocated = 0;

  constructor(dimension: number, maxBytes = DENSE_STORE_MAX_BYTES) {
    this.dimension = dimension;
    this.maxBytes = maxBytes;
  }

  get steps(): number {
    return this.count;
  }

  /** Bytes held: coefficient chunks and step-record blocks. */
  get bytes(): number {
    return this.allocated;
  }

  get start(): number {
    return this.count === 0 ? NaN : this.t0Blocks[0][0];
  }

  get end(): number {
    return this.count === 0 ? NaN : this.t0At(this.count - 1) + this.hAt(this.count - 1);
  }

  private t0At(k: number): number {
    return this.t0Blocks[k >>> blockBits][k & blockMask];
  }

  private hAt(k: number): number {
    return this.hBlocks[k >>> blockBits][k & blockMask];
  }

  /**
   * Bytes the store would hold after `steps` more steps of `vectors` vectors each, written
   * as reserve() and commit() would place them.
   */
  projectedBytes(steps: number, vectors: number): number {
    const size = Math.max(1, vectors * this.dimension);
    const room = this.used + size <= chunkSize ? Math.floor((chunkSize - this.used) / size) : 0;
    const perChunk = Math.max(1, Math.floor(chunkSize / size));
    const newChunks = Math.ceil(Math.max(0, steps - room) / perChunk);
    const newBlocks = Math.ceil((this.count + steps) / blockSteps) - this.t0Blocks.length;
    return this.allocated + newChunks * Math.max(chunkSize, size) * 8 + Math.max(0, newBlocks) * blockBytes;
  }

  /** The most steps of `vectors` vectors that still fit under the ceiling. */
  affordableSteps(vectors: number): number {
    if (!Number.isFinite(this.maxBytes)) return Infinity;
    let lo = 0;
    let hi = 1;
    while (this.projectedBytes(hi, vectors) <= this.maxBytes) {
      lo = hi;
      hi *= 2;
    }
    while (hi - lo > 1) {
      const mid = Math.floor((lo + hi) / 2);
      if (this.projectedBytes(mid, vectors) <= this.maxBytes) lo = mid;
      else hi = mid;
    }
    return lo;
  }

  /**
   * For methods that know their step count in advance (the fixed-step ones): fails at once,
   * before any step, when `steps` more steps of `vectors` vectors would pass the ceiling.
   * `timeAfter(k)` is the time reached after k of those steps, where the store would fill.
   */
  ensureRoom(steps: number, vectors: number, timeAfter: (k: number) => number): void {
    const need = this.projectedBytes(steps, vectors);
    if (need <= this.maxBytes) return;
    const fit = this.affordableSteps(vectors);
    const count = Number.isFinite(steps) ? String(steps) : 'more than 1e308';
    throw this.full(
      timeAfter(fit),
      `${count} steps of ${vectors} vectors of ${this.dimension} values would need ${formatBytes(need)}; ${fit} fit`,
      'a coarser step or a shorter span',
    );
  }

  private full(t: number, what: string, remedy: string): IntegrationFailure {
    return new IntegrationFailure(
      'too-much-memory',
      t,
      null,
      `the values kept between steps would pass the ${formatBytes(this.maxBytes)} ceiling at t = ${Number(t.toPrecision(6))} (${what}): use ${remedy}`,
    );
  }

  /** Records one accepted step on [t0, t0 + h]; `coef` holds form.vectors × n values. */
  append(t0: number, h: number, form: DenseForm, coef: Float64Array): void {
    const size = form.vectors * this.dimension;
    const at = this.reserve(size, t0);
    const target = this.openChunk;
    for (let i = 0; i < size; i++) target[at + i] = coef[i];
    this.commit(t0, h, form, size);
  }

  /**
   * Room for the next step's `size` coefficients: returns the offset in openChunk where a
   * solver may write them before commit(). Writing without committing is harmless (a
   * rejected step): the next reservation reuses the place. Fails with 'too-much-memory'
   * when a new chunk would pass the ceiling; `t`, the start of the step, is the time the
   * failure names.
   */
  reserve(size: number, t = this.end): number {
    if (this.used + size > chunkSize) {
      const length = Math.max(chunkSize, size);
      this.claim(length * 8, t);
      this.chunks.push(length === chunkSize && freeChunks.length > 0 ? (freeChunks.pop() as Float64Array) : new Float64Array(length));
      this.used = 0;
    }
    return this.used;
  }

  /** Counts `bytes` more against the ceiling, or fails naming time t. */
  private claim(bytes: number, t: number): void {
    if (this.allocated + bytes > this.maxBytes) {
      throw this.full(
        t,
        `${this.count} steps of ${this.dimension} values stored in ${formatBytes(this.allocated)}`,
        'a looser tolerance (rtol, atol), a coarser step or a shorter span',
      );
    }
    this.allocated += bytes;
  }

  /** The chunk that reserve() points into. */
  get openChunk(): Float64Array {
    return this.chunks[this.chunks.length - 1];
  }

  /** Records the step on [t0, t0 + h] whose `size` coefficients were written at the reserved offset. */
  commit(t0: number, h: number, form: DenseForm, size: number): void {
    const b = this.count >>> blockBits;
    const i = this.count & blockMask;
    if (b === this.t0Blocks.length) this.addBlock(t0);
    if (i === 0) this.blockFirsts[b] = t0;
    this.t0Blocks[b][i] = t0;
    this.hBlocks[b][i] = h;
    this.chunkBlocks[b][i] = this.chunks.length - 1;
    this.offsetBlocks[b][i] = this.used;
    this.formBlocks[b][i] = form === this.lastForm ? this.lastFormIndex : this.formIndex(form);
    this.used += size;
    this.count++;
  }

  private formIndex(form: DenseForm): number {
    let index = this.forms.indexOf(form);
    if (index < 0) {
      if (this.forms.length === 256) throw new RangeError('a dense store holds at most 256 distinct forms');
      index = this.forms.push(form) - 1;
    }
    this.lastForm = form;
    this.lastFormIndex = index;
    return index;
  }

  private addBlock(t0: number): void {
    this.claim(blockBytes, t0);
    if (this.t0Blocks.length === this.blockFirsts.length) {
      const grown = new Float64Array(2 * this.blockFirsts.length);
      grown.set(this.blockFirsts);
      this.blockFirsts = grown;
    }
    const reused = freeBlocks.pop();
    this.t0Blocks.push(reused?.t0 ?? new Float64Array(blockSteps));
    this.hBlocks.push(reused?.h ?? new Float64Array(blockSteps));
    this.chunkBlocks.push(reused?.chunk ?? new Int32Array(blockSteps));
    this.offsetBlocks.push(reused?.offset ?? new Int32Array(blockSteps));
    this.formBlocks.push(reused?.form ?? new Uint8Array(blockSteps));
  }

  stateAt(t: number, side: 'left' | 'right', out: Float64Array): void {
    this.evaluateStep(this.locate(t, side), t, out);
  }

  private evaluateStep(k: number, t: number, out: Float64Array): void {
    const b = k >>> blockBits;
    const i = k & blockMask;
    const h = this.hBlocks[b][i];
    const theta = h > 0 ? Math.min(1, Math.max(0, (t - this.t0Blocks[b][i]) / h)) : 0;
    this.forms[this.formBlocks[b][i]].evaluate(theta, this.chunks[this.chunkBlocks[b][i]], this.offsetBlocks[b][i], this.dimension, out);
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
        while (k < last && this.t0At(k + 1) < t) k++;
      } else {
        while (k < last && this.t0At(k + 1) <= t) k++;
      }
      this.evaluateStep(k, t, y);
      write(row, y);
    }
  }

  sampleInto(times: Float64Array, sides: Uint8Array, picks: Int32Array, volumes: Float64Array, out: Float32Array, stride: number): void {
    this.sample(times, sides, (row, y) => {
      for (let b = 0; b < picks.length; b++) out[b * stride + row] = y[picks[b]] / volumes[b];
    });
  }

  /** Hands the coefficient chunks to the next store and empties this one (any later evaluation throws). */
  release(): void {
    for (const c of this.chunks) if (c.length === chunkSize && freeChunks.length < MAX_FREE_CHUNKS) freeChunks.push(c);
    for (let b = 0; b < this.t0Blocks.length && freeBlocks.length < MAX_FREE_BLOCKS; b++) {
      freeBlocks.push({ t0: this.t0Blocks[b], h: this.hBlocks[b], chunk: this.chunkBlocks[b], offset: this.offsetBlocks[b], form: this.formBlocks[b] });
    }
    this.t0Blocks.length = 0;
    this.hBlocks.length = 0;
    this.chunkBlocks.length = 0;
    this.offsetBlocks.length = 0;
    this.formBlocks.length = 0;
    this.chunks.length = 0;
    this.count = 0;
    this.used = chunkSize;
    this.allocated = 0;
  }

  knots(from = -Infinity, to = Infinity): Float64Array {
    if (this.count === 0) return Float64Array.of(this.end);
    const first = from === -Infinity ? 0 : this.locate(from, 'right');
    const last = to === Infinity ? this.count - 1 : this.locate(to, 'right');
    const out = new Float64Array(last - first + 2);
    for (let k = first; k <= last; k++) out[k - first] = this.t0At(k);
    out[last - first + 1] = this.end;
    return out;
  }

  /**
   * Index of the step that holds t, preferring the earlier step at a shared boundary when side
   * is 'left': the last step whose start is < t (left) or <= t (right), else the first. Searched
   * in two levels, the blocks by their first starts and then one block's starts, so that each
   * level reads one contiguous array.
   */
  private locate(t: number, side: 'left' | 'right'): number {
    if (this.count === 0) throw new RangeError('empty trajectory');
    const left = side === 'left';
    const firsts = this.blockFirsts;
    let lo = 0;
    let hi = this.t0Blocks.length - 1;
    while (lo < hi) {
      const mid = (lo + hi + 1) >>> 1;
      const s = firsts[mid];
      if (left ? s < t : s <= t) lo = mid;
      else hi = mid - 1;
    }
    const block = this.t0Blocks[lo];
    const base = lo << blockBits;
    let i = 0;
    let j = Math.min(blockSteps, this.count - base) - 1;
    while (i < j) {
      const mid = (i + j + 1) >>> 1;
      const s = block[mid];
      if (left ? s < t : s <= t) i = mid;
      else j = mid - 1;
    }
    return base + i;
  }
}
