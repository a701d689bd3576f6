/**
 * Non-compartmental figures summarised over subjects. Exposure figures are close to
 * log-normal between subjects, so they are summarised by the geometric mean exp(mean ln x) and
 * the geometric CV √(exp(s²) − 1), s² the sample variance of ln x (the log-normal CV, e.g.
 * Kirkwood 1979, Biometrics 35:908 — from memory); the arithmetic mean, SD, minimum and
 * maximum are given beside them. Times (Tmax, Tlast) are summarised by median and range
 * (common practice: they are sampled on a grid, not log-normal).
 */
import { ncaFigureInfo, ncaFigureNames, type NcaFigureName, type NcaResult } from './nca.ts';

export interface NcaFigureSummary {
  /** Subjects with a value of this figure. */
  n: number;
  /** null when n = 0, when any value is ≤ 0, or for a figure summarised by its median. */
  geometricMean: number | null;
  /** √(exp(s²) − 1) as a fraction (0.25 = 25 %); null as geometricMean, and for n < 2. */
  geometricCv: number | null;
  mean: number | null;
  /** Sample SD (n − 1); null for n < 2. */
  sd: number | null;
  median: number | null;
  min: number | null;
  max: number | null;
}

export interface NcaSummary {
  subjects: number;
  figures: Partial<Record<NcaFigureName, NcaFigureSummary>>;
}

/** Median of sorted values: the middle one, or the mean of the two middle ones. */
function medianOfSorted(v: Float64Array): number {
  const h = v.length >> 1;
  return v.length % 2 === 1 ? v[h] : (v[h - 1] + v[h]) / 2;
}

/** The summary of one figure's values (every value finite). */
export function summariseValues(values: readonly number[], geometric: boolean): NcaFigureSummary {
  const n = values.length;
  if (n === 0) return { n, geometricMean: null, geometricCv: null, mean: null, sd: null, median: null, min: null, max: null };
  const v = Float64Array.from(values).sort();
  let mean = 0;
  for (let i = 0; i < n; i++) mean += v[i];
  mean /= n;
  let ss = 0;
  for (let i = 0; i < n; i++) ss += (v[i] - mean) ** 2;
  const sd = n > 1 ? Math.sqrt(ss / (n - 1)) : null;
  let geometricMean: number | null = null;
  let geometricCv: number | null = null;
  if (geometric && v[0] > 0) {
    let ml = 0;
    for (let i = 0; i < n; i++) ml += Math.log(v[i]);
    ml /= n;
    let sl = 0;
    for (let i = 0; i < n; i++) sl += (Math.log(v[i]) - ml) ** 2;
    geometricMean = Math.exp(ml);
    // √(exp(s²) − 1) through expm1, exact for small s².
    if (n > 1) geometricCv = Math.sqrt(Math.expm1(sl / (n - 1)));
  }
  return { n, geometricMean, geometricCv, mean, sd, median: medianOfSorted(v), min: v[0], max: v[n - 1] };
}

/** Each figure over the subjects that have it (a null is left out, so n may differ between figures). */
export function summariseNca(results: readonly { subject: string; result: NcaResult }[]): NcaSummary {
  const figures: Partial<Record<NcaFigureName, NcaFigureSummary>> = {};
  for (const name of ncaFigureNames) {
    const how = ncaFigureInfo[name].summary;
    if (how === 'none') continue;
    const values: number[] = [];
    for (const r of results) {
      const v = r.result.figures[name];
      if (v !== null) values.push(v);
    }
    figures[name] = summariseValues(values, how === 'geometric');
  }
  return { subjects: results.length, figures };
}
