/**
 * A level reported below its limit L, counted as censored: its likelihood is the probability
 * of a level below the limit at the prediction f, Φ((L − f)/SD), the censored normal
 * likelihood (Tobin, Econometrica 26 (1958) 24–36). Its contribution to −2 log likelihood, −2 ln Φ(z), is
 * non-negative, so it enters the sum of squares as the residual √(−2 ln Φ(z)) and the
 * optimiser stays a least-squares one.
 */
import { normalCdf } from '../population/normal.ts';

const HALF_LN_2PI = 0.5 * Math.log(2 * Math.PI);

/** ln Φ(z); below z = −30 by the asymptotic series' leading terms (Abramowitz & Stegun 26.2.12), where Φ nears underflow. */
export function logNormalCdf(z: number): number {
  if (z > -30) return Math.log(normalCdf(z));
  return -0.5 * z * z - Math.log(-z) - HALF_LN_2PI + Math.log1p(-1 / (z * z));
}

/** The residual of a censored level: √(−2 ln Φ(z)), z = (limit − prediction)/SD. */
export function censoredResidual(z: number): number {
  return Math.sqrt(Math.max(0, -2 * logNormalCdf(z)));
}
