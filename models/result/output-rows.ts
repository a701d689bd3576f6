/** The reported rows of a run: the output times merged with the schedule's breakpoints. */
import type { Schedule } from '../building/events.ts';

/** Output times merged with breakpoints; a breakpoint with a bolus gives two rows (before and after). */
export function outputRows(outputTimes: Float64Array, schedule: Schedule): { times: Float64Array; sides: Uint8Array } {
  const bps = schedule.breakpoints;
  let jumps = 0;
  for (const b of bps) if (b.jumps.length > 0) jumps++;
  const times = new Float64Array(outputTimes.length + bps.length + jumps);
  const sides = new Uint8Array(times.length);
  let r = 0;
  let i = 0;
  let k = 0;
  // Merge two ascending lists; a time present in both is one row (two at a bolus).
  while (i < outputTimes.length || k < bps.length) {
    const tOut = i < outputTimes.length ? outputTimes[i] : Infinity;
    const tBp = k < bps.length ? bps[k].time : Infinity;
    if (tBp <= tOut) {
      if (bps[k].jumps.length > 0) {
        times[r] = tBp;
        sides[r++] = 0;
      }
      times[r] = tBp;
      sides[r++] = 1;
      k++;
      if (tOut === tBp) i++;
    } else {
      times[r] = tOut;
      sides[r++] = 1;
      i++;
    }
  }
  return { times: times.slice(0, r), sides: sides.slice(0, r) };
}
