/**
 * The numerical path: integrate from breakpoint to breakpoint with the chosen method,
 * applying boluses and switching infusion rates exactly at each breakpoint, so that no
 * step ever straddles a discontinuity. Every accepted step lands in one dense store.
 */
import type { Schedule } from '../building/events.ts';
import type { SolverSettings } from '../building/model.ts';
import {
  createIntegratorState,
  fixedStepVectors,
  integrateSegment,
  isFixedStep,
  type ConcreteMethod,
  type IntegratorState,
  type MethodName,
} from './numerics/auto-integrator.ts';
import { DenseStore } from './numerics/dense-store.ts';
import { fixedStepCount, tooManyFixedSteps } from './numerics/explicit-rk.ts';
import type { SolverStats } from './numerics/ode-system.ts';
import type { CompartmentSystem } from '../building/system.ts';

/** The integration spans of the schedule, breakpoint to breakpoint, as the driver runs them. */
function spans(schedule: Schedule): [number, number][] {
  const bps = schedule.breakpoints;
  const out: [number, number][] = [];
  for (let k = 0; k < bps.length; k++) {
    const until = k + 1 < bps.length ? bps[k + 1].time : schedule.end;
    if (until > bps[k].time) out.push([bps[k].time, until]);
  }
  return out;
}

/** The time reached after `steps` fixed steps of h over the spans (the grid restarts at each span). */
function timeAfter(parts: [number, number][], counts: number[], steps: number, h: number): number {
  let left = steps;
  for (let k = 0; k < parts.length; k++) {
    if (left < counts[k]) return parts[k][0] + left * h;
    left -= counts[k];
  }
  return parts.length > 0 ? parts[parts.length - 1][1] : NaN;
}

/**
 * A fixed step's count over the whole schedule is known before the first step: a run that
 * needs more steps than the budget, or more room than the dense store has, is refused at once
 * rather than after integrating up to the limit (16.8 million Euler steps once took 92 s and
 * 6.1 GB before anything was said). Each segment checks its own share again as it starts.
 */
function checkFixedPlan(schedule: Schedule, h: number, vectors: number, budget: number, store: DenseStore): void {
  const parts = spans(schedule);
  const counts = parts.map(([a, b]) => fixedStepCount(a, b, h));
  const total = counts.reduce((sum, c) => sum + c, 0);
  const start = parts.length > 0 ? parts[0][0] : schedule.end;
  const end = parts.length > 0 ? parts[parts.length - 1][1] : schedule.end;
  if (total > budget) throw tooManyFixedSteps(h, total, start, end, budget, timeAfter(parts, counts, budget, h));
  store.ensureRoom(total, vectors, (k) => timeAfter(parts, counts, k, h));
}

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
  const store = new DenseStore(system.dimension);
  const methodsUsed = new Set<ConcreteMethod>();
  const method = solver.method === 'exact' ? 'auto' : (solver.method as MethodName);
  if (isFixedStep(method) && solver.step !== null && solver.step > 0) {
    checkFixedPlan(schedule, solver.step, fixedStepVectors(method), Math.max(0, solver.maxSteps - (stats.acceptedSteps + stats.rejectedSteps)), store);
  }
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
