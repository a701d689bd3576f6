/**
 * Spreads from coefficients of variation: the log-normal identity, logit-normal moments
 * against a fine composite Simpson rule written here, and the logit-normal root and refusals.
 */
import { describe, expect, it } from 'vitest';
import { logitNormalMoments, logitNormalSpread, logNormalSpread } from '../../models/subject/variability.ts';

describe('logNormalSpread', () => {
  it('satisfies cv² = exp(s²) − 1 and the log-normal moments sd/mean = cv', () => {
    for (const cv of [1e-6, 1e-3, 0.1, 0.3, 1, 2.5, 10]) {
      const s = logNormalSpread(cv);
      expect(Math.abs(Math.expm1(s * s) / (cv * cv) - 1)).toBeLessThan(1e-14);
      // Log-normal moments (Johnson, Kotz & Balakrishnan ch. 14): mean e^(s²/2), var (e^(s²) − 1)e^(s²).
      const mean = Math.exp(0.5 * s * s);
      const sd = Math.sqrt(Math.expm1(s * s) * Math.exp(s * s));
      expect(Math.abs(sd / mean / cv - 1)).toBeLessThan(1e-14);
    }
    expect(logNormalSpread(0)).toBe(0);
  });
});

/** E[g(Z)] for Z standard normal by composite Simpson on [−40, 40] with m (even) panels. */
function simpson(g: (z: number) => number, m: number): number {
  const h = 80 / m;
  let sum = 0;
  for (let k = 0; k <= m; k++) {
    const z = -40 + k * h;
    const w = k === 0 || k === m ? 1 : k % 2 === 1 ? 4 : 2;
    sum += w * g(z) * Math.exp(-0.5 * z * z);
  }
  return (sum * h) / 3 / Math.sqrt(2 * Math.PI);
}

describe('logitNormalMoments', () => {
  it('agrees with a composite Simpson rule of 400,000 panels to 1e-12', () => {
    // Simpson's error is h⁴·max|f''''|/180 over the range: with h = 2e-4 and spreads up to 8
    // (fourth derivative of the logistic scaled by s⁴ ≈ 4096·0.125) it is below 1e-14.
    for (const typical of [0.02, 0.3, 0.5, 0.85, 0.999]) {
      for (const spread of [0.05, 0.4, 1.5, 8]) {
        const a = Math.log(typical / (1 - typical));
        const f = (z: number): number => 1 / (1 + Math.exp(-(a + spread * z)));
        const mean = simpson(f, 400_000);
        const sd = Math.sqrt(simpson((z) => (f(z) - mean) ** 2, 400_000));
        const got = logitNormalMoments(typical, spread);
        expect(Math.abs(got.mean - mean)).toBeLessThan(1e-12);
        expect(Math.abs(got.sd - sd)).toBeLessThan(1e-12);
      }
    }
  });

  it('has mean ½ at a median of ½ (symmetry) and sd ≈ spread·t(1 − t) for a small spread (delta method)', () => {
    expect(Math.abs(logitNormalMoments(0.5, 3).mean - 0.5)).toBeLessThan(1e-15);
    const t = 0.2;
    const s = 1e-4;
    expect(Math.abs(logitNormalMoments(t, s).sd / (s * t * (1 - t)) - 1)).toBeLessThan(1e-6);
    expect(logitNormalMoments(t, 0)).toEqual({ mean: t, sd: 0 });
  });
});

describe('logitNormalSpread', () => {
  it('finds the spread whose cv is the one asked for, to 1e-10 relative', () => {
    for (const typical of [0.01, 0.2, 0.5, 0.9]) {
      for (const cv of [0.01, 0.1, 0.4, 0.8]) {
        const found = logitNormalSpread(typical, cv);
        if (!found.ok) throw new Error(found.message);
        const m = logitNormalMoments(typical, found.spread);
        expect(Math.abs(m.sd / m.mean / cv - 1)).toBeLessThan(1e-10);
      }
    }
    expect(logitNormalSpread(0.4, 0)).toEqual({ ok: true, spread: 0 });
  });

  it('takes the smallest spread where the cv is reached twice (small medians)', () => {
    const found = logitNormalSpread(0.01, 1.5); // cv rises past 2 and falls back to 1
    if (!found.ok) throw new Error(found.message);
    for (let s = 0.05; s < found.spread * 0.999; s += 0.05) {
      const m = logitNormalMoments(0.01, s);
      expect(m.sd / m.mean).toBeLessThan(1.5);
    }
  });

  it('refuses what no spread gives, and bad input, in plain words', () => {
    const limit = logitNormalSpread(0.9, 1);
    expect(limit.ok).toBe(false);
    if (!limit.ok) expect(limit.message).toMatch(/approaches 1 only as the spread grows without bound/);
    const peak = logitNormalSpread(0.01, 3);
    expect(peak.ok).toBe(false);
    if (!peak.ok) expect(peak.message).toMatch(/its cv is at most 2\.1\d\d/);
    for (const [typical, cv] of [[0, 0.1], [1, 0.1], [0.5, -0.1], [0.5, Number.NaN]]) {
      const r = logitNormalSpread(typical, cv);
      expect(r.ok).toBe(false);
    }
  });
});
