/**
 * The time to the window: from the first dose, the regimen simulated from empty (not the
 * approach-to-steady-state figures, which measure the AUC's approach, not the targets), to the
 * end of the first dosing interval whose own figures — its trough just before the next dose, its
 * peak, its AUC per 24 h, its shares above or in the window — all meet the targets.
 */
import type { ReadTarget } from '../population/targets.ts';
import { walkIntervals, type ApproachSetup } from './approach-run.ts';
import { targetsMet, targetValues } from './target-values.ts';

export const TIME_TO_WINDOW_DEFINITION =
  'time from the first dose, the regimen simulated from empty, to the end of the first dosing interval whose own figures ' +
  '(its trough just before the next dose, its peak, its AUC per 24 h, its shares above or in the window) all meet the targets; ' +
  'null when that does not happen within the intervals simulated';

export interface WindowTime {
  /** Intervals until the window (the interval it is reached in, counting from 1), or null. */
  intervals: number | null;
  /** Intervals simulated. */
  simulated: number;
  /** The first interval's figures per target (for the loading dose's check). */
  first: number[];
}

export function windowTime(setup: ApproachSetup, targets: readonly ReadTarget[], day: number, maxIntervals: number): WindowTime {
  let intervals: number | null = null;
  let first: number[] = [];
  const simulated = walkIntervals(setup, maxIntervals, (k, read) => {
    const values = targetValues(targets, read, 1, 0, setup.spec.interval, day);
    if (k === 0) first = values;
    if (targetsMet(targets, values).every(Boolean)) intervals = k + 1;
    return intervals !== null;
  });
  return { intervals, simulated, first };
}
