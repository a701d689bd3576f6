/**
 * The terminal phase of a concentration profile: the rate constant λz (JSON `terminalRate`) by
 * a least-squares line through ln C against t over the last points of the profile.
 *
 * Selection (common practice in non-compartmental analysis): among the last n positive levels
 * after Cmax, n = 3 … all of them, the n with the largest adjusted R²; fits whose adjusted R²
 * lies within 1e-4 of the best count as ties and the one with more points is taken (a longer
 * line estimates the slope better when the fit is as good). The caller may fix the points.
 * A line that does not fall (slope ≥ 0) gives no rate.
 */

/** A least-squares line of ln C on t over chosen points. */
export interface LogLinearFit {
  /** −slope of ln C against t: the rate constant (positive when the levels fall). */
  rate: number;
  /** ln C at t = 0 on the line. */
  intercept: number;
  /** R² = 1 − SSres/SStot of ln C. */
  r2: number;
  /** 1 − (1 − R²)(n − 1)/(n − 2); null for n < 3, where it is undefined. */
  adjustedR2: number | null;
  n: number;
}

/** Adjusted R² of a line with one slope fitted to n points (Theil's correction of R² for its degrees of freedom). */
export function adjustedR2(r2: number, n: number): number | null {
  return n < 3 ? null : 1 - ((1 - r2) * (n - 1)) / (n - 2);
}

/**
 * The least-squares line of ln c[i] on t[i] over `indices` (every c[i] > 0). Sums are taken about
 * the means (the textbook centred form), which keeps the slope exact to rounding when the points
 * lie on a line far from t = 0.
 */
export function logLinearFit(t: ArrayLike<number>, c: ArrayLike<number>, indices: readonly number[]): LogLinearFit {
  const n = indices.length;
  const x = new Float64Array(n);
  const y = new Float64Array(n);
  let mx = 0;
  let my = 0;
  for (let j = 0; j < n; j++) {
    x[j] = t[indices[j]];
    y[j] = Math.log(c[indices[j]]);
    mx += x[j];
    my += y[j];
  }
  mx /= n;
  my /= n;
  let sxx = 0;
  let sxy = 0;
  let syy = 0;
  for (let j = 0; j < n; j++) {
    const dx = x[j] - mx;
    const dy = y[j] - my;
    sxx += dx * dx;
    sxy += dx * dy;
    syy += dy * dy;
  }
  const slope = sxy / sxx;
  // SSres = Syy − Sxy²/Sxx, summed directly from the residuals so that a perfect line gives 0, not rounding noise of either sign.
  let ssres = 0;
  for (let j = 0; j < n; j++) {
    const r = y[j] - my - slope * (x[j] - mx);
    ssres += r * r;
  }
  const r2 = syy > 0 ? Math.max(0, 1 - ssres / syy) : 0;
  return { rate: -slope, intercept: my - slope * mx, r2, adjustedR2: adjustedR2(r2, n), n };
}

/** Ties in adjusted R² within this distance go to the fit with more points. */
export const adjustedR2Tie = 1e-4;

export type TerminalPhase =
  | { ok: true; fit: LogLinearFit; indices: number[]; chosenBy: TerminalChoice }
  | { ok: false; reason: string };

/** How the terminal line's levels were chosen: by the rule, by the user, or the only two there are (flagged: fewer than the rule's three). */
export type TerminalChoice = 'best adjusted R²' | 'fixed' | 'two levels only';

/**
 * λz from the profile (t, c). `candidates` are the indices the line may use, in time order: the
 * positive levels after Cmax that are not excluded (the caller decides which). With `fixed`,
 * exactly those indices are used (at least 2, each a candidate).
 */
export function selectTerminalPhase(t: ArrayLike<number>, c: ArrayLike<number>, candidates: readonly number[], fixed?: readonly number[]): TerminalPhase {
  if (fixed !== undefined) {
    const bad = fixed.find((i) => !candidates.includes(i));
    if (bad !== undefined) return { ok: false, reason: `the fixed point ${bad} is not a positive level after Cmax that is used` };
    if (new Set(fixed).size !== fixed.length) return { ok: false, reason: 'a fixed point is given twice' };
    if (fixed.length < 2) return { ok: false, reason: 'a line needs at least 2 fixed points' };
    const indices = [...fixed].sort((a, b) => t[a] - t[b]);
    const fit = logLinearFit(t, c, indices);
    if (!(fit.rate > 0)) return { ok: false, reason: `the levels at the fixed points do not fall (slope ${(-fit.rate).toPrecision(3)})` };
    return { ok: true, fit, indices, chosenBy: 'fixed' };
  }
  if (candidates.length === 2) {
    // Fewer than the rule's three, but a line: given, and flagged by the caller, rather than hidden.
    const fit = logLinearFit(t, c, candidates);
    if (!(fit.rate > 0)) return { ok: false, reason: 'the only 2 positive levels after Cmax do not fall' };
    return { ok: true, fit, indices: [...candidates], chosenBy: 'two levels only' };
  }
  if (candidates.length < 3) {
    return { ok: false, reason: `${candidates.length} positive level${candidates.length === 1 ? '' : 's'} after Cmax; at least 3 are needed for the terminal line` };
  }
  const fits: { fit: LogLinearFit; indices: number[] }[] = [];
  for (let n = 3; n <= candidates.length; n++) {
    const indices = candidates.slice(candidates.length - n);
    const fit = logLinearFit(t, c, indices);
    if (fit.rate > 0) fits.push({ fit, indices });
  }
  if (fits.length === 0) return { ok: false, reason: 'no line through the last 3 or more levels after Cmax falls' };
  // The best adjusted R², then the most points among the fits within the tie distance of it.
  const top = fits.reduce((a, f) => Math.max(a, f.fit.adjustedR2 ?? -Infinity), -Infinity);
  let chosen = fits[0];
  for (const f of fits) if ((f.fit.adjustedR2 ?? -Infinity) >= top - adjustedR2Tie) chosen = f;
  return { ok: true, fit: chosen.fit, indices: chosen.indices, chosenBy: 'best adjusted R²' };
}
