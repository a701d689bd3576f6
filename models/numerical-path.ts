/**
 * The numerical path: integrate from breakpoint to breakpoint with the chosen method,
 * applying boluses and switching infusion rates exactly at each breakpoint, so that no
 * step ever straddles a discontinuity. Every accepted step lands in one dense store.
 */
import type { Schedule } from './events.ts';
import type { SolverSettings } from './model.ts';
import {
  createIntegratorState,
  integrateSegment,
  type ConcreteMethod,
  type IntegratorState,
  type MethodName,
} from './numerics/auto-integrator.ts';
import { DenseStore } from './numerics/dense-store.ts';
import type { SolverStats } from './numerics/ode-system.ts';
import type { CompartmentSystem } from './system.ts';

export interface NumericalRun {
  trajectory: DenseStore;
  final: Float64Array;
  methodsUsed: Set<ConcreteMethod>;
}

/** Runs the schedule from state y (at schedule.start, before the first breakpoint's boluses). */
export function integrateSchedule(
  system: CompartmentSystem,
  schedule: Schedule,
  y0: Float64Array,
  solver: SolverSettings,
  stats: SolverStats,
  state: IntegratorState = createIntegratorState(),
): NumericalRun {
  const y = Float64Array.from(y0);
  const store = new DenseStore(system.dimension, 1024);
  const methodsUsed = new Set<ConcreteMethod>();
  const method = solver.method === 'exact' ? 'auto' : (solver.method as MethodName);
  const bps = schedule.breakpoints;
  for (let k = 0; k < bps.length; k++) {
    const bp = bps[k];
    for (const j of bp.jumps) y[j.compartment] += j.amount;
    system.input.fill(0);
    system.input.set(bp.rates);
    const until = k + 1 < bps.length ? bps[k + 1].time : schedule.end;
    if (!(until > bp.time)) continue;
    const used = stats.acceptedSteps + stats.rejectedSteps;
    const result = integrateSegment(
      system,
      bp.time,
      until,
      y,
      {
        method,
        rtol: solver.rtol,
        atol: solver.atol,
        maxSteps: Math.max(1, solver.maxSteps - used),
        step: solver.step ?? undefined,
      },
      store,
      stats,
      state,
    );
    for (const m of result.methods) methodsUsed.add(m);
  }
  return { trajectory: store, final: y, methodsUsed };
}
