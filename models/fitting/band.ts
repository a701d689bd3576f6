/**
 * The individual's predicted curve on the output grid with a 90% band from the parameter
 * uncertainty: 200 parameter sets drawn from the multivariate normal N(p̂, C) in the transformed
 * coordinates (Philox numbers with a fixed seed, so the band is the same on every run), each
 * simulated, and the 5th and 95th percentiles taken at every time (Hyndman & Fan definition 7).
 * Drawing rather than the delta method keeps the band inside (0, ∞) and follows the model's
 * curvature in the parameters.
 */
import type { Model } from '../building/model.ts';
import { choleskyOf } from './dense.ts';
import { percentileOfSorted } from '../population/percentiles.ts';
import { SubjectRandom } from '../population/random.ts';
import type { Predictor } from './predictor.ts';
import type { FitCurve } from './result.ts';

export const BAND_DRAWS = 200;
const BAND_SEED = 20260412;

/** Concentrations of `compartments` (indices) at the output times, into rows of `out` (compartment-major). */
function sampleCurve(predictor: Predictor, p: Float64Array, compartments: number[], times: Float64Array, out: Float64Array): boolean {
  const sides = new Uint8Array(times.length).fill(1);
  return predictor.solve(p, (m: Model, t) => {
    t.sample(times, sides, (row, state) => {
      compartments.forEach((c, k) => {
        out[k * times.length + row] = state[c] / (m.compartments[c].volume as number);
      });
    });
  });
}

export function predictedCurves(predictor: Predictor, template: Model, p: Float64Array, covariance: Float64Array | null): FitCurve[] {
  const compartments = [...new Set(template.observations.map((o) => template.compartments.findIndex((c) => c.id === o.compartment)))];
  const times = template.outputTimes;
  const T = times.length;
  const best = new Float64Array(compartments.length * T);
  if (!sampleCurve(predictor, p, compartments, times, best)) return [];
  const k = p.length;
  const factor = covariance ? choleskyOf(covariance, k) : null;
  let draws: Float64Array | null = null;
  if (factor) {
    draws = new Float64Array(BAND_DRAWS * compartments.length * T);
    const z = new Float64Array(k);
    const q = new Float64Array(k);
    const one = new Float64Array(compartments.length * T);
    let kept = 0;
    for (let d = 0; d < BAND_DRAWS; d++) {
      const random = new SubjectRandom(BAND_SEED, d);
      for (let i = 0; i < k; i++) z[i] = random.normal(0, i);
      for (let i = 0; i < k; i++) {
        let sum = p[i];
        for (let c = 0; c <= i; c++) sum += factor[i * k + c] * z[c];
        q[i] = Math.min(predictor.params.upper[i], Math.max(predictor.params.lower[i], sum));
      }
      if (!sampleCurve(predictor, q, compartments, times, one)) continue;
      draws.set(one, kept * one.length);
      kept++;
    }
    if (kept < BAND_DRAWS / 2) draws = null;
    else draws = draws.subarray(0, kept * compartments.length * T);
  }
  const n = draws ? draws.length / (compartments.length * T) : 0;
  const column = new Float64Array(n);
  return compartments.map((c, b) => {
    const lower: number[] = [];
    const upper: number[] = [];
    if (draws) {
      for (let j = 0; j < T; j++) {
        for (let d = 0; d < n; d++) column[d] = draws[d * compartments.length * T + b * T + j];
        column.sort();
        lower.push(percentileOfSorted(column, n, 5));
        upper.push(percentileOfSorted(column, n, 95));
      }
    }
    return {
      compartment: template.compartments[c].id,
      times: Array.from(times),
      predicted: Array.from(best.subarray(b * T, (b + 1) * T)),
      lower: draws ? lower : null,
      upper: draws ? upper : null,
    };
  });
}
