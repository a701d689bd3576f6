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
  const { warmups = 2, minReps = 5, maxReps = 15, budgetMs = 1500 } = options;
  let value = fn();
  for (let i = 1; i < warmups; i++) value = fn();
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
 * Times several jobs in interleaved rounds (every job once per round, alternating the
 * order), so that load from elsewhere on the machine falls on all of them alike rather
 * than on whichever happened to run at a busy moment. `warmups` untimed rounds first;
 * then at least minReps rounds, more (up to maxReps) while the budget lasts.
 */
export function timeRounds<T>(jobs: Job<T>[], options: TimeOptions = {}): JobResult<T>[] {
  const { warmups = 2, minReps = 5, maxReps = 9, budgetMs = 30_000 } = options;
  const values = new Map<string, T>();
  const samples = new Map<string, number[]>(jobs.map((j) => [j.key, []]));
  for (let w = 0; w < warmups; w++) for (const job of jobs) values.set(job.key, job.run());
  const started = performance.now();
  for (let round = 0; round < maxReps; round++) {
    if (round >= minReps && performance.now() - started > budgetMs) break;
    const order = round % 2 === 0 ? jobs : [...jobs].reverse();
    for (const job of order) {
      const t0 = performance.now();
      const value = job.run();
      (samples.get(job.key) as number[]).push(performance.now() - t0);
      values.set(job.key, value);
    }
  }
  return jobs.map((job) => ({
    key: job.key,
    timing: summarise(samples.get(job.key) as number[]),
    value: values.get(job.key) as T,
  }));
}
