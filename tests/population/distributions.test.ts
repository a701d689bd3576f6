/**
 * Covariate draws by inverse distribution function from one uniform: truncated normal against
 * its analytic quantile, bounds always kept, far-tail truncation, log-normal and uniform.
 */
import { describe, expect, it } from 'vitest';
import { drawFrom } from '../../models/population/distributions';
import type { NumericDistribution } from '../../models/population/distributions';
import { normalCdf, normalQuantile } from '../../models/population/normal.ts';
import { logNormalSpread } from '../../models/subject/variability.ts';
import { SubjectRandom } from '../../models/population/random';

const weight: NumericDistribution = { kind: 'normal', mean: 75, sd: 15, min: 45, max: 120 };

/** Analytic quantile of the truncated normal: Φ⁻¹(F(min) + q(F(max) − F(min))) (textbook). */
function truncatedQuantile(q: number): number {
  const lo = normalCdf((45 - 75) / 15);
  const hi = normalCdf((120 - 75) / 15);
  return 75 + 15 * normalQuantile(lo + q * (hi - lo));
}

describe('drawFrom', () => {
  it('truncated normal: sample quantiles of 20,000 draws match the analytic quantile', () => {
    const N = 20_000;
    const x = new Float64Array(N);
    for (let s = 0; s < N; s++) x[s] = drawFrom(weight, new SubjectRandom(31, s).uniform(4, 0));
    x.sort();
    const lo = normalCdf(-2);
    const hi = normalCdf(3);
    for (const q of [0.05, 0.25, 0.5, 0.75, 0.95]) {
      const exact = truncatedQuantile(q);
      // Standard error of a sample quantile: √(q(1 − q)/N)/f(x_q) (common practice), f the
      // truncated density φ(z)/(sd·(F(max) − F(min))).
      const z = (exact - 75) / 15;
      const density = Math.exp(-0.5 * z * z) / Math.sqrt(2 * Math.PI) / 15 / (hi - lo);
      const se = Math.sqrt((q * (1 - q)) / N) / density;
      expect(Math.abs(x[Math.floor(q * N)] - exact)).toBeLessThan(4 * se);
      // The draw is the quantile function itself at u = q.
      expect(Math.abs(drawFrom(weight, q) - exact)).toBeLessThan(1e-12);
    }
    expect(x[0]).toBeGreaterThanOrEqual(45);
    expect(x[N - 1]).toBeLessThanOrEqual(120);
  });

  it('keeps every draw within [min, max], also at the extreme uniforms and for far-tail truncation', () => {
    const cases: NumericDistribution[] = [
      weight,
      { kind: 'normal', mean: 0, sd: 1, min: 9, max: 12 }, // entirely in the upper tail
      { kind: 'normal', mean: 0, sd: 1, min: -30, max: -29 }, // far lower tail
      { kind: 'normal', mean: 0, sd: 1, min: null, max: 0 },
      { kind: 'log-normal', median: 70, cv: 0.3, min: 40, max: 110 },
      { kind: 'log-normal', median: 1, cv: 0.5, min: 0, max: null },
      { kind: 'uniform', min: 18, max: 80 },
    ];
    for (const d of cases) {
      let previous = -Infinity;
      for (const u of [2 ** -53, 1e-12, 1e-3, 0.2, 0.5, 0.8, 1 - 1e-12, 1 - 2 ** -53]) {
        const v = drawFrom(d, u);
        expect(Number.isFinite(v)).toBe(true);
        if (d.min !== null) expect(v).toBeGreaterThanOrEqual(d.min);
        if (d.max !== null) expect(v).toBeLessThanOrEqual(d.max);
        expect(v).toBeGreaterThanOrEqual(previous); // monotone in u
        previous = v;
      }
    }
    // Upper-tail truncation keeps its digits: the median of N(0,1) on [9, 12] is ≈ 9 + ln 2/9.
    // (Mills ratio: the tail beyond a is ≈ exponential with rate a; common practice.)
    const median = drawFrom({ kind: 'normal', mean: 0, sd: 1, min: 9, max: 12 }, 0.5);
    expect(Math.abs(median - (9 + Math.LN2 / 9))).toBeLessThan(0.01);
  });

  it('log-normal: median at u = ½, log draws with mean ln(median) and sd logNormalSpread(cv)', () => {
    const d: NumericDistribution = { kind: 'log-normal', median: 70, cv: 0.25, min: null, max: null };
    expect(Math.abs(drawFrom(d, 0.5) - 70)).toBeLessThan(1e-12);
    const s = logNormalSpread(0.25);
    const N = 20_000;
    let m1 = 0, m2 = 0;
    for (let k = 0; k < N; k++) {
      const y = Math.log(drawFrom(d, new SubjectRandom(5, k).uniform(9, 3)));
      m1 += y; m2 += y * y;
    }
    m1 /= N;
    const sd = Math.sqrt(m2 / N - m1 * m1);
    // Normal sampling errors: s/√N for the mean, s/√(2N) for the sd (common practice).
    expect(Math.abs(m1 - Math.log(70))).toBeLessThan((4 * s) / Math.sqrt(N));
    expect(Math.abs(sd - s)).toBeLessThan((4 * s) / Math.sqrt(2 * N));
    expect(drawFrom({ kind: 'log-normal', median: 3, cv: 0, min: null, max: null }, 0.9)).toBe(3);
  });

  it('uniform: endpoints and midpoint', () => {
    const d: NumericDistribution = { kind: 'uniform', min: 18, max: 80 };
    expect(drawFrom(d, 0.5)).toBe(49);
    expect(Math.abs(drawFrom(d, 2 ** -53) - 18)).toBeLessThan(1e-14);
    expect(Math.abs(drawFrom(d, 1 - 2 ** -53) - 80)).toBeLessThan(1e-13);
  });
});
