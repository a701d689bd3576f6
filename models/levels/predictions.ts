/**
 * The model's prediction at each observation's time, read off the continuous solution (the
 * dense output or the exact propagator, Trajectory.stateAt), never off the output grid: the
 * same value at any output step. At a dose given at that very time the level just before it
 * is taken, as a sample drawn then is drawn before the dose.
 */
import type { Model } from '../building/model.ts';
import type { Trajectory } from '../solving/numerics/dense-store.ts';
import type { ObservationFit } from './observation.ts';

export function predictObservations(model: Model, trajectory: Trajectory): ObservationFit[] {
  if (model.observations.length === 0) return [];
  const state = new Float64Array(trajectory.dimension);
  return model.observations.map((o) => {
    const c = model.compartments.findIndex((x) => x.id === o.compartment);
    const volume = model.compartments[c].volume as number;
    // The trajectory begins just after the boluses at the start; before them the body is empty.
    if (o.time <= model.start) state.fill(0);
    else trajectory.stateAt(o.time, 'left', state);
    const predicted = state[c] / volume;
    const residual = o.belowLimit || o.concentration === null ? null : o.concentration - predicted;
    return { ...o, predicted, residual };
  });
}

/** The clock as the result carries it: the origin as an ISO 8601 date-time and the zone, for showing clock times. */
export interface ResultClock {
  /** The origin in the zone, e.g. "2026-03-04T08:00+01:00". */
  origin: string;
  /** The offset clock times are shown in: "+01:00", or "Z" for UTC. */
  zone: string;
  /** False when the scenario gave no zone and UTC was taken. */
  zoneGiven: boolean;
  /** How the origin was chosen. */
  originFrom: 'clock.origin' | 'first dose';
  /** The origin in milliseconds since 1970-01-01T00:00Z, and the zone in minutes east of UTC, for computing clock times. */
  originMs: number;
  zoneMinutes: number;
  /** Hours per unit of the result's time, so a time t shows as the clock time origin + t × hoursPerTimeUnit h. */
  hoursPerTimeUnit: number;
}
