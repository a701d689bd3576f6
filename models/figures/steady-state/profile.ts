/**
 * The steady-state cycle as a curve: concentrations over one dosing cycle from the periodic
 * state, so that a plot can show the steady state itself rather than the last simulated
 * interval (which may be far from it).
 */
import type { Schedule } from '../../building/events.ts';
import type { Model } from '../../building/model.ts';
import type { Trajectory } from '../../solving/numerics/dense-store.ts';
import { outputRows } from '../../result/output-rows.ts';

export interface CycleProfile {
  /** Times from the start of the cycle; a bolus time appears twice (before, then after). */
  times: number[];
  /** Concentrations at those times, for each compartment with a volume. */
  compartments: { compartment: string; concentration: number[] }[];
}

/** Evenly spaced points per cycle, plus every dose event; enough for a smooth curve on screen and paper. */
const PROFILE_POINTS = 240;

/**
 * Samples one cycle's trajectory at PROFILE_POINTS + 1 times and its breakpoints. A trajectory
 * begins just after the boluses at its start, so the row just before them is `initial`, the
 * periodic state itself.
 */
export function cycleProfile(cycleModel: Model, trajectory: Trajectory, schedule: Schedule, initial: Float64Array): CycleProfile {
  const period = cycleModel.end - cycleModel.start;
  const grid = Float64Array.from({ length: PROFILE_POINTS + 1 }, (_, i) => cycleModel.start + (period * i) / PROFILE_POINTS);
  const rows = outputRows(grid, schedule);
  const withVolume = cycleModel.compartments.map((c, i) => ({ c, i })).filter(({ c }) => c.volume !== null);
  const series = withVolume.map(() => new Array<number>(rows.times.length));
  trajectory.sample(rows.times, rows.sides, (row, sampled) => {
    const state = rows.sides[row] === 0 && rows.times[row] === cycleModel.start ? initial : sampled;
    withVolume.forEach(({ c, i }, k) => {
      series[k][row] = state[i] / (c.volume as number);
    });
  });
  return {
    times: Array.from(rows.times),
    compartments: withVolume.map(({ c }, k) => ({ compartment: c.id, concentration: series[k] })),
  };
}
