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

/**
 * Rearranges a[from … n−1] so that a[k] is the value a sort would put there, the smaller ones
 * before it and the larger after (Wirth's selection, Algorithms + Data Structures = Programs, 1976):
 * O(n) on average, where a sort is O(n log n). The values must not be NaN.
 */
export function selectKth(a: Float64Array, from: number, n: number, k: number): number {
  let l = from;
  let m = n - 1;
  while (l < m) {
    const x = a[k];
    let i = l;
    let j = m;
    do {
      while (a[i] < x) i++;
      while (x < a[j]) j--;
      if (i <= j) {
        const t = a[i];
        a[i] = a[j];
        a[j] = t;
        i++;
        j--;
      }
    } while (i <= j);
    if (j < k) l = i;
    if (k < i) m = j;
  }
  return a[k];
}

/**
 * The percentiles (ascending) of a[0 … n−1] by definition 7, as percentileOfSorted gives on the
 * sorted sample, by selection: each order statistic found in what lies above the previous one.
 * Reorders a.
 */
export function percentilesBySelection(a: Float64Array, n: number, ascending: readonly number[], out: Float64Array): void {
  let from = 0;
  for (let p = 0; p < ascending.length; p++) {
    const h = ((n - 1) * ascending[p]) / 100;
    const lo = Math.floor(h);
    const x = selectKth(a, from, n, lo);
    let y = x;
    if (lo + 1 < n && h > lo) {
      // The next order statistic is the smallest value above position lo.
      y = a[lo + 1];
      for (let i = lo + 2; i < n; i++) if (a[i] < y) y = a[i];
    }
    out[p] = x === y ? x : x + (h - lo) * (y - x);
    from = lo;
  }
}
