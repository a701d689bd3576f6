/**
 * Counter-based random numbers: Philox4x32-10 against its published known answers and an
 * exact BigInt restatement; SubjectRandom's reproducibility, random access, independence of
 * subjects, and the distribution of its uniforms and normals on 100,000 draws.
 */
import { describe, expect, it } from 'vitest';
import { openUnitFromWords, philox4x32, SubjectRandom } from '../../models/population/random';

/**
 * Random123 `tests/kat_vectors`, rows "philox4x32 10" (D. E. Shaw Research): counter[4],
 * key[2] → output[4]. The upstream file is not in the searchable index; these rows were read
 * from copies of it quoted verbatim in several public repositories (found with the code
 * search), which agree with each other word for word.
 */
const KNOWN_ANSWERS: { counter: number[]; key: number[]; out: number[] }[] = [
  { counter: [0, 0, 0, 0], key: [0, 0], out: [0x6627e8d5, 0xe169c58d, 0xbc57ac4c, 0x9b00dbd8] },
  {
    counter: [0xffffffff, 0xffffffff, 0xffffffff, 0xffffffff],
    key: [0xffffffff, 0xffffffff],
    out: [0x408f276d, 0x41c83b0e, 0xa20bc7c6, 0x6d5451fd],
  },
  {
    counter: [0x243f6a88, 0x85a308d3, 0x13198a2e, 0x03707344], // hex digits of pi
    key: [0xa4093822, 0x299f31d0],
    out: [0xd16cfe09, 0x94fdcceb, 0x5001e420, 0x24126ea1],
  },
];

/** Philox4x32-10 restated with BigInt products (exact 64-bit arithmetic), Salmon et al. 2011. */
function philoxBig(key: number[], counter: number[]): number[] {
  const mask = 0xffffffffn;
  let [x0, x1, x2, x3] = counter.map(BigInt);
  let [k0, k1] = key.map(BigInt);
  for (let r = 0; r < 10; r++) {
    if (r > 0) {
      k0 = (k0 + 0x9e3779b9n) & mask;
      k1 = (k1 + 0xbb67ae85n) & mask;
    }
    const p0 = 0xd2511f53n * x0;
    const p1 = 0xcd9e8d57n * x2;
    [x0, x1, x2, x3] = [(p1 >> 32n) ^ x1 ^ k0, p1 & mask, (p0 >> 32n) ^ x3 ^ k1, p0 & mask];
  }
  return [x0, x1, x2, x3].map(Number);
}

describe('philox4x32', () => {
  it.each(KNOWN_ANSWERS.map((k, i) => [i, k] as const))('matches Random123 known answer %i', (_i, k) => {
    const out = new Uint32Array(4);
    philox4x32(k.key[0], k.key[1], k.counter[0], k.counter[1], k.counter[2], k.counter[3], out);
    expect(Array.from(out)).toEqual(k.out);
  });

  it('agrees with an exact BigInt statement of the cipher on 500 pseudo-random inputs', () => {
    const out = new Uint32Array(4);
    let s = 12345;
    const next = (): number => (s = (Math.imul(s, 1664525) + 1013904223) >>> 0); // Numerical Recipes LCG
    for (let t = 0; t < 500; t++) {
      const key = [next(), next()];
      const counter = [next(), next(), next(), next()];
      philox4x32(key[0], key[1], counter[0], counter[1], counter[2], counter[3], out);
      expect(Array.from(out)).toEqual(philoxBig(key, counter));
    }
  });
});

describe('openUnitFromWords', () => {
  it('stays strictly inside (0, 1) and is symmetric: u(a, b) + u(~a, ~b) = 1 exactly', () => {
    expect(openUnitFromWords(0, 0)).toBe(2 ** -53);
    expect(openUnitFromWords(0xffffffff, 0xffffffff)).toBe(1 - 2 ** -53);
    for (const [a, b] of [[0, 0], [0x12345678, 0x9abcdef0], [0xfffff000, 0], [0x80000000, 1]]) {
      expect(openUnitFromWords(a, b) + openUnitFromWords(~a >>> 0, ~b >>> 0)).toBe(1);
    }
  });
});

describe('SubjectRandom', () => {
  it('gives the same bits for the same (seed, subject, stream, index), in any order of access', () => {
    const a = new SubjectRandom(20240917, 31);
    const forward = Array.from({ length: 50 }, (_, i) => a.uniform(3, i));
    const b = new SubjectRandom(20240917, 31);
    for (let i = 49; i >= 0; i--) {
      b.uniform(7, 1000 + i); // interleave another stream to defeat the block cache
      expect(b.uniform(3, i)).toBe(forward[i]);
    }
    expect(new SubjectRandom(20240917, 31).normal(3, 17)).toBe(b.normal(3, 17));
  });

  it('reads the block of draws 2b and 2b + 1 from the cipher as documented', () => {
    const words = new Uint32Array(4);
    const seed = 5 * 2 ** 32 + 77;
    const index = 2 * (3 * 2 ** 32 + 9) + 1; // block b = 3·2^32 + 9, odd index → words 2 and 3
    philox4x32(77, 5, 9, 3 + 11 * 65536, 123, 0, words);
    expect(new SubjectRandom(seed, 123).uniform(11, index)).toBe(openUnitFromWords(words[2], words[3]));
  });

  it('gives different numbers to different subjects, streams and seeds (high seed bits included)', () => {
    const base = new SubjectRandom(1, 0);
    const others = [new SubjectRandom(1, 1), new SubjectRandom(1 + 2 ** 32, 0), new SubjectRandom(2, 0)];
    for (const other of others) {
      let same = 0;
      for (let i = 0; i < 1000; i++) if (other.uniform(0, i) === base.uniform(0, i)) same++;
      expect(same).toBe(0);
    }
    let same = 0;
    for (let i = 0; i < 1000; i++) if (base.uniform(1, i) === base.uniform(0, i)) same++;
    expect(same).toBe(0);
  });

  it('refuses arguments outside their ranges with a plain message', () => {
    expect(() => new SubjectRandom(-1, 0)).toThrow(/seed/);
    expect(() => new SubjectRandom(2 ** 53, 0)).toThrow(/seed/);
    expect(() => new SubjectRandom(0, 2 ** 32)).toThrow(/subject/);
    const r = new SubjectRandom(0, 0);
    expect(() => r.uniform(65536, 0)).toThrow(/stream/);
    expect(() => r.uniform(0, 2 ** 40)).toThrow(/index/);
    expect(() => r.uniform(0, 1.5)).toThrow(/index/);
  });

  const N = 100_000;

  it('uniforms: mean, variance and Kolmogorov–Smirnov distance on 100,000 draws', () => {
    // One draw per subject, as the population engine will use them.
    const u = new Float64Array(N);
    for (let i = 0; i < N; i++) u[i] = new SubjectRandom(99, i).uniform(0, 0);
    let mean = 0;
    for (const x of u) mean += x;
    mean /= N;
    let variance = 0;
    for (const x of u) variance += (x - 0.5) ** 2;
    variance /= N;
    // Standard errors: sqrt(1/12/N) for the mean; sqrt((1/80 − 1/144)/N) for the mean of (U − ½)²
    // (moments of the uniform law). Four standard errors: a false alarm about once in 16,000 runs.
    expect(Math.abs(mean - 0.5)).toBeLessThan(4 * Math.sqrt(1 / 12 / N));
    expect(Math.abs(variance - 1 / 12)).toBeLessThan(4 * Math.sqrt((1 / 80 - 1 / 144) / N));
    u.sort();
    let d = 0;
    for (let i = 0; i < N; i++) d = Math.max(d, (i + 1) / N - u[i], u[i] - i / N);
    // Kolmogorov's limit law: P(√N·D > 1.95) ≈ 0.001 (from memory, Kolmogorov distribution table).
    expect(d * Math.sqrt(N)).toBeLessThan(1.95);
  });

  it('normals: mean, variance, skewness and excess kurtosis on 100,000 draws within four standard errors', () => {
    const r = new SubjectRandom(4242, 7);
    let m1 = 0, m2 = 0, m3 = 0, m4 = 0;
    for (let i = 0; i < N; i++) {
      const z = r.normal(2, i);
      m1 += z; m2 += z * z; m3 += z * z * z; m4 += z * z * z * z;
    }
    m1 /= N; m2 /= N; m3 /= N; m4 /= N;
    // Large-sample standard errors for a normal sample: 1/√N, √(2/N), √(6/N), √(24/N) (common practice).
    expect(Math.abs(m1)).toBeLessThan(4 / Math.sqrt(N));
    expect(Math.abs(m2 - 1)).toBeLessThan(4 * Math.sqrt(2 / N));
    expect(Math.abs(m3)).toBeLessThan(4 * Math.sqrt(6 / N));
    expect(Math.abs(m4 - 3)).toBeLessThan(4 * Math.sqrt(24 / N));
  });
});
