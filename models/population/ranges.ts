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

/**
 * Chunks of `range` for threads that take them one at a time, as [first, count] pairs in
 * subject order: about 16 per thread (so a thread that starts late or runs slower takes fewer
 * and all finish together), at most 64 subjects each, at least one.
 */
export function chunkRanges(range: { first: number; count: number }, threads: number): Int32Array {
  const size = Math.max(1, Math.min(64, Math.ceil(range.count / (16 * Math.max(1, threads)))));
  const n = Math.ceil(range.count / size);
  const out = new Int32Array(2 * n);
  for (let c = 0; c < n; c++) {
    out[2 * c] = range.first + c * size;
    out[2 * c + 1] = Math.min(size, range.count - c * size);
  }
  return out;
}
