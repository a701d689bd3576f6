/**
 * How subjects are split: shards of a cluster array job and batches of threads take contiguous
 * ranges. No other import, so a program's own thread can split work without loading the engine.
 */

/** Subjects [first, first + count) of shard `index` (1-based) of `of` equal contiguous parts. */
export function shardRange(subjects: number, index: number, of: number): { first: number; count: number } {
  const first = Math.floor((subjects * (index - 1)) / of);
  const end = Math.floor((subjects * index) / of);
  return { first, count: end - first };
}

/** Splits subjects into `parts` contiguous batches of nearly equal size (for threads). */
export function batchRanges(subjects: number, parts: number): { first: number; count: number }[] {
  const n = Math.max(1, Math.min(parts, subjects));
  return Array.from({ length: n }, (_, k) => shardRange(subjects, k + 1, n));
}
