/**
 * Covariate distributions drawn by the inverse distribution function from one uniform each, so
 * every subject uses a fixed count of uniforms and any draw can be addressed directly.
 * Truncation maps u into [F(min), F(max)] instead of rejecting draws.
 */
import { normalCdf, normalQuantile } from './normal.ts';
import { logNormalSpread } from '../subject/variability.ts';

export type NumericDistribution =
  | { kind: 'normal'; mean: number; sd: number; min: number | null; max: number | null }
  | { kind: 'log-normal'; median: number; cv: number; min: number | null; max: number | null }
  | { kind: 'uniform'; min: number; max: number };

/**
 * The standard normal restricted to [lo, hi] (±Infinity for no bound), at uniform u. When the
 * whole interval lies above 0 the upper tail Φ(−z) is used, so that a truncation far out on
 * either side keeps its digits instead of subtracting numbers near 1.
 */
export function truncatedStandardNormal(u: number, lo: number, hi: number): number {
  let z: number;
  if (lo > 0) {
    const qLo = normalCdf(-lo);
    const qHi = normalCdf(-hi);
    z = -normalQuantile(qLo - u * (qLo - qHi));
  } else {
    const pLo = normalCdf(lo);
    const pHi = normalCdf(hi);
    z = normalQuantile(pLo + u * (pHi - pLo));
  }
  // Rounding in Φ and Φ⁻¹ may step a hair outside the bounds; a draw never does.
  return Math.min(hi, Math.max(lo, z));
}

function normalDraw(mean: number, sd: number, min: number | null, max: number | null, u: number): number {
  if (sd === 0) return mean;
  const lo = min === null ? -Infinity : (min - mean) / sd;
  const hi = max === null ? Infinity : (max - mean) / sd;
  const x = mean + sd * truncatedStandardNormal(u, lo, hi);
  return clamp(x, min, max);
}

function logNormalDraw(median: number, cv: number, min: number | null, max: number | null, u: number): number {
  const s = logNormalSpread(cv);
  if (s === 0) return median;
  const center = Math.log(median);
  const lo = min === null || min <= 0 ? -Infinity : (Math.log(min) - center) / s;
  const hi = max === null ? Infinity : (Math.log(max) - center) / s;
  return clamp(median * Math.exp(s * truncatedStandardNormal(u, lo, hi)), min, max);
}

function clamp(x: number, min: number | null, max: number | null): number {
  if (min !== null && x < min) return min;
  if (max !== null && x > max) return max;
  return x;
}

/** The value of distribution d at uniform u ∈ (0, 1), by its inverse distribution function. */
export function drawFrom(d: NumericDistribution, u: number): number {
  switch (d.kind) {
    case 'normal':
      return normalDraw(d.mean, d.sd, d.min, d.max, u);
    case 'log-normal':
      return logNormalDraw(d.median, d.cv, d.min, d.max, u);
    case 'uniform':
      return d.min + u * (d.max - d.min);
  }
}
