/** Wall-clock timing: warm-up runs, then the median of N timed repetitions (performance.now()). */

export interface Timing {
  /** Median wall time of the timed repetitions (ms). */
  median: number;
  min: number;
  max: number;
  /** Number of timed repetitions (after the warm-ups). */
  reps: number;
}

export interface TimeOptions {
  warmups?: number;
  /**
   * Keep warming up until this much time (ms) has passed as well: a job of a fraction of a
   * millisecond would otherwise be timed before the optimising compiler has finished with it.
   */
  warmupMs?: number;
  /** At least this many timed repetitions. */
  minReps?: number;
  /** At most this many. */
  maxReps?: number;
  /** Stop adding repetitions beyond minReps once this much time (ms) has been spent timing. */
  budgetMs?: number;
}

/**
 * Times fn: `warmups` untimed calls (JIT, caches), then repetitions until minReps are
 * done and either maxReps or the budget is reached. Returns the median and the value of
 * the last call (so that accuracy is measured on the very run that was timed).
 */
export function timeIt<T>(fn: () => T, options: TimeOptions = {}): { timing: Timing; value: T } {
  const { warmups = 2, warmupMs = 300, minReps = 5, maxReps = 15, budgetMs = 1500 } = options;
  const warmStart = performance.now();
  let value = fn();
  for (let i = 1; i < warmups || performance.now() - warmStart < warmupMs; i++) value = fn();
  const samples: number[] = [];
  let spent = 0;
  while (samples.length < minReps || (samples.length < maxReps && spent < budgetMs)) {
    const t0 = performance.now();
    value = fn();
    const dt = performance.now() - t0;
    samples.push(dt);
    spent += dt;
  }
  return { timing: summarise(samples), value };
}

export function summarise(samples: number[]): Timing {
  const s = [...samples].sort((a, b) => a - b);
  const mid = s.length >> 1;
  const median = s.length % 2 === 1 ? s[mid] : (s[mid - 1] + s[mid]) / 2;
  return { median, min: s[0], max: s[s.length - 1], reps: s.length };
}

export interface Job<T> {
  key: string;
  run: () => T;
}

export interface JobResult<T> {
  key: string;
  timing: Timing;
  /** Value of the last (timed) call. */
  value: T;
}

/**
 * Times several jobs one after another, each in its own block of consecutive calls
 * (timeIt: warm-ups, then the timed repetitions). Blocks rather than interleaved rounds:
 * odex allocates fresh arrays at every right-hand-side call, and interleaved, the garbage
 * collection it causes fell on whichever job ran next — the exact path measured up to 1.7×
 * and the adaptive path 2× slower after an odex run than after their own.
 */
export function timeBlocks<T>(jobs: Job<T>[], options: TimeOptions = {}): JobResult<T>[] {
  return jobs.map((job) => ({ key: job.key, ...timeIt(job.run, options) }));
}
