/**
 * Between-subject variability given as a coefficient of variation (cv = sd/mean), turned into
 * the spread of the normal deviate that drives it: for a log-normal quantity exactly, for a
 * fraction kept inside (0, 1) by a logit-normal law by quadrature and root finding.
 */

/**
 * SD of ln X when X is log-normal with coefficient of variation cv: cv² = exp(s²) − 1, so
 * s = sqrt(ln(1 + cv²)) (log-normal moments; Johnson, Kotz & Balakrishnan, Continuous
 * Univariate Distributions vol. 1, 2nd ed., ch. 14).
 */
export function logNormalSpread(cv: number): number {
  return Math.sqrt(Math.log1p(cv * cv));
}

const INV_SQRT_2PI = 0.3989422804014327;
const Z_LIMIT = 38.5; // φ(38.5) ≈ 1e-322: nothing beyond contributes to a double

function logistic(t: number): number {
  return t >= 0 ? 1 / (1 + Math.exp(-t)) : Math.exp(t) / (1 + Math.exp(t));
}

/**
 * Step of the trapezoidal rule on z ∈ [−38.5, 38.5] for E[g(a + sZ)], g logistic. The rule
 * converges geometrically for integrands analytic in a strip (Trefethen & Weideman, SIAM
 * Review 56 (2014) 385–458, thm 5.1): error ≈ exp(−2πd/h) with d the strip half-width. The
 * logistic's poles lie at Im z = ±π/s, so h = 0.5/s gives exp(−4π²) ≈ 7e-18 relative; the
 * Gaussian alone needs h ≤ 0.5 (error ≈ exp(−2π²/h²) ≈ 1e-34).
 */
function stepFor(spread: number): number {
  return Math.min(0.5, 0.5 / spread);
}

/**
 * Mean and SD of F = 1/(1 + exp(−(logit(typical) + spread·Z))), Z standard normal, typical the
 * median of F; by the trapezoidal rule (see stepFor), the variance in a second pass about the
 * mean so that a small SD is not lost to cancellation.
 */
export function logitNormalMoments(typical: number, spread: number): { mean: number; sd: number } {
  const a = Math.log(typical / (1 - typical));
  if (spread === 0) return { mean: typical, sd: 0 };
  const h = stepFor(spread);
  const n = Math.ceil(Z_LIMIT / h);
  let mean = 0;
  for (let k = -n; k <= n; k++) {
    const z = k * h;
    mean += Math.exp(-0.5 * z * z) * logistic(a + spread * z);
  }
  mean *= h * INV_SQRT_2PI;
  let variance = 0;
  for (let k = -n; k <= n; k++) {
    const z = k * h;
    const d = logistic(a + spread * z) - mean;
    variance += Math.exp(-0.5 * z * z) * d * d;
  }
  variance *= h * INV_SQRT_2PI;
  return { mean, sd: Math.sqrt(variance) };
}

function logitNormalCv(typical: number, spread: number): number {
  const m = logitNormalMoments(typical, spread);
  return m.sd / m.mean;
}

// Scan of the spread: 0.01·1.25^k up to about 200, beyond which the cv has settled on its limit 1.
const SCAN_START = 0.01;
const SCAN_RATIO = 1.25;
const SCAN_END = 200;

type Scan = { lo: number; hi: number } | { best: number; at: number; rising: boolean };

/**
 * The first scan point whose cv reaches the target, with the one before it; otherwise the
 * largest cv seen, where, and whether the cv was still rising at the end of the scan.
 */
function bracket(typical: number, cv: number): Scan {
  let lo = 0;
  let best = 0;
  let at = 0;
  let last = 0;
  for (let s = SCAN_START; s <= SCAN_END; s *= SCAN_RATIO) {
    const c = logitNormalCv(typical, s);
    if (c >= cv) return { lo, hi: s };
    if (c > best) {
      best = c;
      at = s;
    }
    last = c;
    lo = s;
  }
  return { best, at, rising: last === best };
}

/** Golden-section search for the largest cv on [at/r, at·r] around the scan's best point. */
function peakCv(typical: number, at: number): number {
  const g = (Math.sqrt(5) - 1) / 2;
  let a = at / SCAN_RATIO;
  let b = at * SCAN_RATIO;
  for (let k = 0; k < 60; k++) {
    const x1 = b - g * (b - a);
    const x2 = a + g * (b - a);
    if (logitNormalCv(typical, x1) < logitNormalCv(typical, x2)) a = x1;
    else b = x2;
  }
  return logitNormalCv(typical, 0.5 * (a + b));
}

function unreachable(typical: number, cv: number, scan: { best: number; at: number; rising: boolean }): string {
  const head = `a fraction with typical value ${typical} cannot vary with a cv of ${cv}: kept between 0 and 1, `;
  if (scan.rising) {
    return head + `its cv approaches 1 only as the spread grows without bound (${scan.best.toPrecision(4)} at a spread of ` +
      `${scan.at.toPrecision(3)}, where nearly every subject sits at 0 or 1); lower the cv`;
  }
  const peak = peakCv(typical, scan.at);
  return head + `its cv is at most ${peak.toPrecision(4)} (at a spread near ${scan.at.toPrecision(3)}) and tends to 1 ` +
    `as the spread grows; lower the cv`;
}

/** Bisection on cv(spread) − cv until the bracket is within 1e-12 relative. */
function bisect(typical: number, cv: number, lo: number, hi: number): number {
  while (hi - lo > 1e-12 * hi) {
    const mid = 0.5 * (lo + hi);
    if (mid <= lo || mid >= hi) break;
    if (logitNormalCv(typical, mid) >= cv) hi = mid;
    else lo = mid;
  }
  return 0.5 * (lo + hi);
}

/**
 * The spread whose logit-normal fraction, with median `typical`, has coefficient of variation
 * `cv`; the smallest such spread when several reach it (for a small median the cv rises above
 * 1 and comes back to 1 as the spread grows, every F then piling up at 0 and 1 equally).
 */
export function logitNormalSpread(typical: number, cv: number): { ok: true; spread: number } | { ok: false; message: string } {
  if (!(typical > 0 && typical < 1)) {
    return { ok: false, message: `the typical value of a fraction must lie strictly between 0 and 1, not ${typical}` };
  }
  if (!(cv >= 0) || !Number.isFinite(cv)) {
    return { ok: false, message: `the cv must be zero or a positive number, not ${cv}` };
  }
  if (cv === 0) return { ok: true, spread: 0 };
  const found = bracket(typical, cv);
  if ('best' in found) return { ok: false, message: unreachable(typical, cv, found) };
  return { ok: true, spread: bisect(typical, cv, found.lo, found.hi) };
}
