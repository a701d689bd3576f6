/**
 * TrackedPercentiles against the definition it implements: sort the sample, then interpolate
 * between order statistics, h = (n − 1)·q/100 (Hyndman & Fan 1996, definition 7; the default of
 * R's quantile and NumPy's percentile) — percentileOfSorted on a sorted copy. Exact equality:
 * both read the same order statistics and interpolate by the same expression.
 */
import { describe, expect, it } from 'vitest';
import { percentileOfSorted } from '../../models/population/percentiles.ts';
import { TrackedPercentiles } from '../../models/population/tracked-percentiles.ts';
import { mulberry32 } from '../helpers/mulberry32.ts';

function byDefinition(values: Float64Array, percentiles: number[]): number[] {
  const sorted = values.slice().sort();
  return percentiles.map((q) => percentileOfSorted(sorted, values.length, q));
}

/** Samples of n subjects over `times` steps: random walks, with jumps, ties and constant stretches. */
function* series(n: number, times: number, seed: number): Generator<Float64Array> {
  const random = mulberry32(seed);
  const x = Float64Array.from({ length: n }, () => random());
  for (let t = 0; t < times; t++) {
    const phase = Math.floor(t / 25) % 4;
    for (let i = 0; i < n; i++) {
      if (phase === 0) x[i] += 0.02 * (random() - 0.5); // slow drift: ranks barely change
      else if (phase === 1) x[i] = random(); // reshuffled every step
      else if (phase === 2) x[i] = Math.round(x[i] * 4) / 4; // many ties
      else x[i] = t % 5 === 0 ? 0 : x[i] * (1 + 0.1 * random()); // all equal now and then (a pre-dose zero)
    }
    yield x;
  }
}

describe('percentiles tracked from one sample to the next', () => {
  it('equal the sorted-sample definition exactly, whatever the order does between samples', () => {
    for (const [n, percentiles] of [
      [1, [5, 50, 95]],
      [2, [5, 50, 95]],
      [3, [10, 50, 90]],
      [17, [2.5, 25, 50, 75, 97.5]],
      [400, [5, 50, 95]],
    ] as [number, number[]][]) {
      const tracker = new TrackedPercentiles(n, percentiles);
      const out = new Float64Array(percentiles.length);
      for (const sample of series(n, 200, n)) {
        tracker.next(sample, out);
        expect(Array.from(out)).toEqual(byDefinition(sample, percentiles));
      }
      if (n >= 17) expect(tracker.hits).toBeGreaterThan(tracker.misses);
    }
  });

  it('leave the sample as it was', () => {
    const tracker = new TrackedPercentiles(50, [5, 50, 95]);
    const out = new Float64Array(3);
    for (const sample of series(50, 60, 7)) {
      const before = sample.slice();
      tracker.next(sample, out);
      expect(sample).toEqual(before);
    }
  });
});
