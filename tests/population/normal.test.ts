/**
 * The normal quantile (AS 241) and distribution function (Cody's erfc) against a reference
 * computed independently in 360-digit decimal arithmetic (decimal.js, a mathjs dependency),
 * against published values, by round trip, by symmetry, and against mathjs erf.
 */
import Decimal from 'decimal.js';
import { erf } from 'mathjs';
import { describe, expect, it } from 'vitest';
import { normalCdf, normalQuantile } from '../../models/population/normal.ts';

const EPS = 2 ** -52;
const D = Decimal.clone({ precision: 360 });

/**
 * The double x as a Decimal, exactly: decimal.js reads a number through its shortest decimal
 * string, which differs from the binary value by up to half an ulp (enough to move Φ(−30) by
 * 1e-13 relative).
 */
function exact(x: number): Decimal {
  let m = x;
  let e = 0;
  while (!Number.isInteger(m)) {
    m *= 2;
    e--;
  }
  return new D(m).times(new D(2).pow(e));
}

/**
 * Φ(x) from the everywhere-convergent series Φ(x) = ½ + φ(x)·Σ x^(2n+1)/(1·3·…·(2n+1))
 * (Abramowitz & Stegun 26.2.11). For x < 0 the sum cancels down to Φ ≈ e^(−x²/2): 360 digits
 * leave more than 40 for x ≥ −38
 * (Φ(−37.5) ≈ 4.6e-310 is the last value above the subnormal range, where relative accuracy ends).
 */
function referenceCdf(x: number): Decimal {
  const xd = exact(x);
  const x2 = xd.times(xd);
  const density = referenceDensity(x);
  // Stop once the terms, times φ(x), are below 1e-345 absolute: Φ ≥ 1e-317 here, so the
  // truncation is far below a double's resolution of the result.
  const floor = new D('1e-345').dividedBy(density);
  let term = xd;
  let sum = xd;
  for (let n = 1; ; n++) {
    term = term.times(x2).dividedBy(2 * n + 1);
    sum = sum.plus(term);
    if (n > x * x && term.abs().lessThan(floor)) break;
  }
  return density.times(sum).plus(0.5);
}

function referenceDensity(x: number): Decimal {
  const xd = exact(x);
  return xd.times(xd).dividedBy(-2).exp().dividedBy(D.acos(-1).times(2).sqrt());
}

function relativeError(value: number, reference: Decimal): number {
  return exact(value).minus(reference).dividedBy(reference).abs().toNumber();
}

describe('normalQuantile', () => {
  it('gives published values', () => {
    // 1.959963984540054: the 97.5% point, standard tables (from memory, 1.95996398454005423552).
    expect(normalQuantile(0.975)).toBeCloseTo(1.959963984540054, 15);
    // Wichura (1988), the test values printed with AS 241 (from memory).
    expect(normalQuantile(0.25)).toBeCloseTo(-0.6744897501960817, 15);
    expect(normalQuantile(0.001)).toBeCloseTo(-3.090232306167814, 14);
    expect(Math.abs(normalQuantile(1e-20) / -9.262340089798408 - 1)).toBeLessThan(4 * EPS);
    expect(Math.abs(normalQuantile(1e-10) / -6.361340902404056 - 1)).toBeLessThan(4 * EPS); // from memory
    expect(normalQuantile(0.5)).toBe(0);
    expect(normalQuantile(0)).toBe(-Infinity);
    expect(normalQuantile(1)).toBe(Infinity);
    expect(normalQuantile(1.5)).toBeNaN();
  });

  it('is within 1e-15 relative of the root of the 360-digit Φ over p from 1e-300 to 1 − 1e-12', () => {
    // The exact root is z − (Φ(z) − p)/φ(z) to second order; the correction itself is below
    // 1e-15 relative, so its square is far below what is measured.
    let worst = 0;
    const ps = [1e-300, 1e-200, 1e-100, 1e-50, 1e-20, 1e-10, 1e-5, 0.001, 0.02425, 0.075, 0.3, 0.5 - 1e-9, 0.7, 0.93, 0.999, 1 - 1e-9, 1 - 1e-12];
    for (const p of ps) {
      const z = normalQuantile(p);
      if (z === 0) continue;
      const pd = exact(p);
      const root = exact(z).minus(referenceCdf(z).minus(pd).dividedBy(referenceDensity(z)));
      worst = Math.max(worst, exact(z).minus(root).dividedBy(root).abs().toNumber());
    }
    expect(worst).toBeLessThan(1e-15);
  });

  it('is antisymmetric: Φ⁻¹(1 − p) = −Φ⁻¹(p) where 1 − p is exact', () => {
    for (let k = 1; k < 1024; k += 7) {
      const p = k / 1024;
      expect(Math.abs(normalQuantile(1 - p) + normalQuantile(p))).toBeLessThanOrEqual(4 * EPS * Math.abs(normalQuantile(p)));
    }
  });
});

describe('normalCdf', () => {
  it('is within 2e-15 relative of the 360-digit reference from x = −37.5 to 8', () => {
    let worst = 0;
    for (let x = -37.5; x <= 8; x += 0.37) worst = Math.max(worst, relativeError(normalCdf(x), referenceCdf(x)));
    for (const x of [-0.66, -0.6629, 0.6629, -5.657, -5.6569, -1e-3, 1e-3]) worst = Math.max(worst, relativeError(normalCdf(x), referenceCdf(x)));
    // Cody's rational approximations are good to about 1e-18; a dozen roundings remain (~10ε).
    expect(worst).toBeLessThan(2e-15);
  });

  it('round trip Φ(Φ⁻¹(p)) = p within 8ε(1 + z²) relative for p in [1e-300, 1 − 1e-16]', () => {
    // Φ's relative condition number at z is |z|φ(z)/Φ(z) ≈ z² in the lower tail, so the mere
    // rounding of z to a double (ε/2 relative) moves Φ by about z²ε/2: at p = 1e-300 (z ≈ −37)
    // no double z gives better than ~1.5e-13. The 1e-14 aim holds where 8ε(1 + z²) ≤ 1e-14, |z| ≤ 2.2.
    let worst = 0;
    for (let e = -300; e < -0.31; e += 0.173) {
      for (const p of [10 ** e, 1 - 10 ** e]) {
        if (p >= 1 || p < 1e-300) continue;
        const z = normalQuantile(p);
        const back = normalCdf(z);
        worst = Math.max(worst, Math.abs(back - p) / p / (1 + z * z));
      }
    }
    const top = 1 - 1e-16;
    expect(Math.abs(normalCdf(normalQuantile(top)) - top)).toBeLessThanOrEqual(EPS);
    expect(worst).toBeLessThan(8 * EPS);
    for (let k = 1; k < 100; k++) {
      const p = k / 100;
      expect(Math.abs(normalCdf(normalQuantile(p)) / p - 1)).toBeLessThan(1e-14);
    }
  });

  it('is symmetric: Φ(x) + Φ(−x) = 1', () => {
    for (let x = 0; x < 9; x += 0.0731) expect(Math.abs(normalCdf(x) + normalCdf(-x) - 1)).toBeLessThanOrEqual(2 * EPS);
  });

  it('agrees with mathjs erf, itself first checked against the 360-digit reference', () => {
    // mathjs erf implements Cody's erf too (the same coefficients, separate code): first its
    // accuracy, 4e-16 absolute on |y| ≤ 6 where erf is formed as 1 − erfc (so relative in the
    // tail it is not, and the comparison is absolute).
    for (let y = -6; y <= 6; y += 0.173) {
      const ref = referenceCdf(y * Math.SQRT2).times(2).minus(1);
      expect(Math.abs(exact(erf(y)).minus(ref).toNumber())).toBeLessThan(4e-16);
    }
    for (let x = -8; x <= 8; x += 0.0917) {
      const other = 0.5 * (1 + erf(x / Math.SQRT2));
      // Both within ~2e-16 absolute of Φ; the halving and x/√2 add one rounding each.
      expect(Math.abs(normalCdf(x) - other)).toBeLessThan(6e-16);
    }
  });

  it('handles the ends', () => {
    expect(normalCdf(-Infinity)).toBe(0);
    expect(normalCdf(Infinity)).toBe(1);
    expect(normalCdf(-40)).toBe(0);
    expect(normalCdf(0)).toBe(0.5);
    expect(normalCdf(Number.NaN)).toBeNaN();
  });
});
