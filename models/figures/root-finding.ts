/**
 * Root of a smooth function on a bracket [a, b] with g(a)·g(b) ≤ 0: Newton steps from the
 * cubic-Hermite guess, falling back to bisection whenever a step would leave the bracket
 * or shrinks too slowly (rtsafe; Press et al., Numerical Recipes, 3rd ed., §9.4).
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
  // Orient so that g(lo) < 0 < g(hi).
  let lo = ga < 0 ? a : b;
  let hi = ga < 0 ? b : a;
  let t = hermiteGuess(a, b, ga, gb, slopeA, slopeB);
  let dxOld = Math.abs(b - a);
  let dx = dxOld;
  const v = new Float64Array(2);
  g(t, v);
  for (let i = 0; i < maxIterations; i++) {
    const f = v[0];
    const df = v[1];
    if (f === 0) return t;
    if (f < 0) lo = t;
    else hi = t;
    const newtonLeaves = ((t - hi) * df - f) * ((t - lo) * df - f) > 0;
    if (newtonLeaves || !Number.isFinite(df) || Math.abs(2 * f) > Math.abs(dxOld * df)) {
      // Newton would leave the bracket or is not converging fast enough: bisect.
      dxOld = dx;
      dx = 0.5 * (hi - lo);
      t = lo + dx;
    } else {
      dxOld = dx;
      dx = f / df;
      t -= dx;
    }
    if (Math.abs(dx) <= tolerance) return t;
    g(t, v);
  }
  return t;
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
