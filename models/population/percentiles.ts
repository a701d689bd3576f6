/** Percentiles and histograms of a sample. */

/**
 * The q-th percentile (0 < q < 100) of an ascending sample by linear interpolation between
 * order statistics, h = (n − 1)·q/100 (Hyndman & Fan 1996, definition 7; the default of R and NumPy).
 */
export function percentileOfSorted(sorted: Float64Array, n: number, q: number): number {
  if (n === 0) return NaN;
  const h = ((n - 1) * q) / 100;
  const lo = Math.floor(h);
  const hi = Math.min(n - 1, lo + 1);
  const a = sorted[lo];
  const b = sorted[hi];
  // Equal neighbours (also two infinities) need no interpolation: ∞ − ∞ would give NaN.
  return a === b ? a : a + (h - lo) * (b - a);
}

export interface Histogram {
  /** Bin edges, ascending: bins + 1 numbers. */
  edges: number[];
  counts: number[];
}

/** Equal-width bins over the finite values' range; the last bin includes its upper edge. */
export function histogramOfSorted(sorted: Float64Array, n: number, bins: number): Histogram | null {
  let lo = 0;
  while (lo < n && !Number.isFinite(sorted[lo])) lo++;
  let hi = n - 1;
  while (hi >= lo && !Number.isFinite(sorted[hi])) hi--;
  if (hi < lo) return null;
  const min = sorted[lo];
  const max = sorted[hi];
  if (min === max) return { edges: [min, max], counts: [hi - lo + 1] };
  const width = (max - min) / bins;
  const edges = Array.from({ length: bins + 1 }, (_, k) => (k === bins ? max : min + k * width));
  const counts = new Array<number>(bins).fill(0);
  for (let i = lo; i <= hi; i++) counts[Math.min(bins - 1, Math.floor((sorted[i] - min) / width))]++;
  return { edges, counts };
}
