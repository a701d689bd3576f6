/**
 * Root of a smooth function on a bracket [a, b] with g(a)·g(b) ≤ 0: Newton steps from the
 * cubic-Hermite guess, falling back to bisection whenever a step leaves the bracket or
 * fails to halve it (a safeguarded Newton method; Press et al., Numerical Recipes, 3rd ed., §9.4).
 */
export interface SmoothFunction {
  /** Writes g(t) and g'(t) into out[0], out[1]. */
  (t: number, out: Float64Array): void;
}

export function refineRoot(
  g: SmoothFunction,
  a: number,
  b: number,
  ga: number,
  gb: number,
  slopeA: number,
  slopeB: number,
  tolerance: number,
  maxIterations = 60,
): number {
  if (ga === 0) return a;
  if (gb === 0) return b;
  let lo = a;
  let hi = b;
  let glo = ga;
  let t = hermiteGuess(a, b, ga, gb, slopeA, slopeB);
  const v = new Float64Array(2);
  let lastWidth = hi - lo;
  for (let i = 0; i < maxIterations; i++) {
    g(t, v);
    const gt = v[0];
    if (gt === 0) return t;
    if (Math.sign(gt) === Math.sign(glo)) {
      lo = t;
      glo = gt;
    } else {
      hi = t;
    }
    if (hi - lo <= tolerance) return 0.5 * (lo + hi);
    let next = t - gt / v[1];
    const width = hi - lo;
    if (!(next > lo && next < hi) || width > 0.5 * lastWidth) {
      // Newton left the bracket or is not shrinking it fast enough: bisect this time.
      next = 0.5 * (lo + hi);
    }
    lastWidth = width;
    if (Math.abs(next - t) <= 0.25 * tolerance) return next;
    t = next;
  }
  return 0.5 * (lo + hi);
}

/** Root of the cubic Hermite interpolant of g on [a, b] (the secant when slopes are unknown); a good first guess. */
function hermiteGuess(a: number, b: number, ga: number, gb: number, sa: number, sb: number): number {
  const h = b - a;
  if (!Number.isFinite(sa) || !Number.isFinite(sb)) return a - (ga * h) / (gb - ga);
  const p = (theta: number) => {
    const t2 = theta * theta;
    const t3 = t2 * theta;
    return (2 * t3 - 3 * t2 + 1) * ga + (t3 - 2 * t2 + theta) * h * sa + (-2 * t3 + 3 * t2) * gb + (t3 - t2) * h * sb;
  };
  let lo = 0;
  let hi = 1;
  const slo = Math.sign(ga);
  for (let i = 0; i < 30; i++) {
    const mid = 0.5 * (lo + hi);
    if (Math.sign(p(mid)) === slo) lo = mid;
    else hi = mid;
  }
  const guess = a + 0.5 * (lo + hi) * h;
  return Number.isFinite(guess) ? guess : 0.5 * (a + b);
}
