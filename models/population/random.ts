/**
 * Counter-based random numbers for virtual subjects: every number is a pure function of
 * (seed, subject, stream, index), so subject i draws the same values whatever the split of
 * the population across threads or machines, and any draw can be computed directly.
 *
 * Generator: Philox4x32-10 (Salmon, Moraes, Dror & Shaw, "Parallel random numbers: as easy
 * as 1, 2, 3", SC'11), checked against the Random123 known-answer vectors in the tests.
 */
import { normalQuantile } from './normal.ts';

/** Random streams of a subject (SubjectRandom's `stream`): one purpose each, so adding one never shifts another. */
export const STREAMS = { covariates: 0, effects: 1, residual: 2, tableRow: 3 } as const;

// Philox4x32 round multipliers and Weyl key increments (Salmon et al. 2011, table 2 / Random123 philox.h).
const M0 = 0xd2511f53;
const M1 = 0xcd9e8d57;
const W0 = 0x9e3779b9;
const W1 = 0xbb67ae85;
const M0_LO = M0 & 0xffff;
const M0_HI = M0 >>> 16;
const M1_LO = M1 & 0xffff;
const M1_HI = M1 >>> 16;
const TWO_16 = 65536;
const TWO_32 = 4294967296;

/**
 * High 32 bits of the 64-bit product a·m of two uint32, with m given by its 16-bit halves.
 * Each partial product is below 2^32 and the middle sum below 2^34, so doubles hold them exactly.
 */
function mulHi(a: number, mLo: number, mHi: number): number {
  const aLo = a & 0xffff;
  const aHi = a >>> 16;
  const low = aLo * mLo;
  const mid = aHi * mLo + aLo * mHi + Math.floor(low / TWO_16);
  return aHi * mHi + Math.floor(mid / TWO_16);
}

/**
 * Philox4x32-10: the counter (c0, c1, c2, c3) enciphered under the key (key0, key1), ten
 * rounds, written to out[0..3] as uint32. All arguments are taken modulo 2^32.
 */
export function philox4x32(key0: number, key1: number, c0: number, c1: number, c2: number, c3: number, out: Uint32Array): void {
  let k0 = key0 >>> 0;
  let k1 = key1 >>> 0;
  let x0 = c0 >>> 0;
  let x1 = c1 >>> 0;
  let x2 = c2 >>> 0;
  let x3 = c3 >>> 0;
  for (let round = 0; round < 10; round++) {
    if (round > 0) {
      // The key is bumped between rounds, not before the first (Random123 philox.h).
      k0 = (k0 + W0) >>> 0;
      k1 = (k1 + W1) >>> 0;
    }
    const hi0 = mulHi(x0, M0_LO, M0_HI);
    const lo0 = Math.imul(x0, M0) >>> 0;
    const hi1 = mulHi(x2, M1_LO, M1_HI);
    const lo1 = Math.imul(x2, M1) >>> 0;
    x0 = (hi1 ^ x1 ^ k0) >>> 0;
    x1 = lo1;
    x2 = (hi0 ^ x3 ^ k1) >>> 0;
    x3 = lo0;
  }
  out[0] = x0;
  out[1] = x1;
  out[2] = x2;
  out[3] = x3;
}

const TWO_52 = 4503599627370496;
const INV_TWO_52 = 1 / TWO_52;

/**
 * Two uint32 words → a double strictly inside (0, 1): the top 52 bits k give (k + 0.5)/2^52.
 * Every such value is exact, the set is symmetric about 1/2 (u and 1 − u both occur, so normal
 * draws are exactly antisymmetric) and never 0 or 1. A 53-bit midpoint grid cannot be
 * represented: above 1/2 the doubles are 2^-53 apart, so its half-offsets would round (the
 * largest to 1).
 */
export function openUnitFromWords(a: number, b: number): number {
  const k = (a >>> 12) * TWO_32 + (b >>> 0); // 20 + 32 = 52 bits
  return (k + 0.5) * INV_TWO_52;
}

const MAX_STREAM = 65536; // 2^16
const MAX_INDEX = 1099511627776; // 2^40
const MAX_SEED = 9007199254740992; // 2^53

function isIntegerIn(value: number, limit: number): boolean {
  return Number.isInteger(value) && value >= 0 && value < limit;
}

/**
 * The random numbers of one subject. Counter layout of the Philox block that holds draws
 * 2b and 2b + 1 of a stream (b = floor(index / 2)):
 *   c0 = b mod 2^32, c1 = floor(b / 2^32) + stream·2^16 (b < 2^39, so its high part fits in
 *   the low 16 bits), c2 = subject, c3 = 0 (reserved);
 *   key = (seed mod 2^32, floor(seed / 2^32)).
 * An even index reads words 0 and 1 of the block, an odd index words 2 and 3.
 */
export class SubjectRandom {
  private readonly key0: number;
  private readonly key1: number;
  private readonly subject: number;
  private readonly block = new Uint32Array(4);
  private cachedStream = -1;
  private cachedBlock = -1;

  constructor(seed: number, subject: number) {
    if (!isIntegerIn(seed, MAX_SEED)) throw new RangeError(`the seed must be a whole number from 0 to 2^53 − 1, not ${seed}`);
    if (!isIntegerIn(subject, TWO_32)) throw new RangeError(`the subject number must be a whole number from 0 to 2^32 − 1, not ${subject}`);
    this.key0 = seed % TWO_32;
    this.key1 = Math.floor(seed / TWO_32);
    this.subject = subject;
  }

  /** Draw `index` of `stream`, uniform on the open interval (0, 1). */
  uniform(stream: number, index: number): number {
    if (!isIntegerIn(stream, MAX_STREAM)) throw new RangeError(`the stream must be a whole number from 0 to 65535, not ${stream}`);
    if (!isIntegerIn(index, MAX_INDEX)) throw new RangeError(`the draw index must be a whole number from 0 to 2^40 − 1, not ${index}`);
    const b = Math.floor(index / 2);
    if (b !== this.cachedBlock || stream !== this.cachedStream) this.fill(stream, b);
    const w = (index & 1) === 0 ? 0 : 2;
    return openUnitFromWords(this.block[w], this.block[w + 1]);
  }

  /** Draw `index` of `stream`, standard normal: the normal quantile of the same uniform. */
  normal(stream: number, index: number): number {
    return normalQuantile(this.uniform(stream, index));
  }

  private fill(stream: number, b: number): void {
    const c0 = b % TWO_32;
    const c1 = Math.floor(b / TWO_32) + stream * TWO_16;
    philox4x32(this.key0, this.key1, c0, c1, this.subject, 0, this.block);
    this.cachedStream = stream;
    this.cachedBlock = b;
  }
}
