/**
 * Solving a schedule: the exact path for a linear model (or when asked for), the numerical
 * path otherwise. Shared by the main run and the steady-state search.
 */
import type { Schedule } from '../building/events.ts';
import { propagateExact, type PropagatorCache } from './linear-path.ts';
import type { Model } from '../building/model.ts';
import { integrateSchedule } from './numerical-path.ts';
import type { Trajectory } from './numerics/dense-store.ts';
import type { SolverStats } from './numerics/ode-system.ts';
import type { CompartmentSystem } from '../building/system.ts';

export type SolutionPath = 'exact' | 'adaptive' | 'fixed';

export function choosePath(model: Model): SolutionPath {
  const m = model.solver.method;
  if (m === 'exact' || (m === 'auto' && model.linear)) return 'exact';
  return ['euler', 'heun', 'rk4', 'abm2'].includes(m) ? 'fixed' : 'adaptive';
}

export interface Solution {
  trajectory: Trajectory;
  final: Float64Array;
  methodsUsed: string[];
  propagators: number;
  /** The exact path's propagators, for a later run of the same system to share (PropagatorCache shareWith). */
  propagatorCache?: PropagatorCache;
}

/** Solves the model's schedule from state y0 by the path the model's settings choose. */
export function solveSchedule(
  model: Model,
  system: CompartmentSystem,
  schedule: Schedule,
  y0: Float64Array,
  stats: SolverStats,
  /** Propagators already made for this system and schedule (the exact path), to reuse. */
  cache?: PropagatorCache,
): Solution {
  if (choosePath(model) === 'exact') {
    const run = propagateExact(system, schedule, y0, cache);
    return { trajectory: run.trajectory, final: run.final, methodsUsed: ['exact'], propagators: run.trajectory.cache.computed, propagatorCache: run.trajectory.cache };
  }
  const run = integrateSchedule(system, schedule, y0, model.solver, stats);
  return { trajectory: run.trajectory, final: run.final, methodsUsed: [...run.methodsUsed], propagators: 0 };
}
