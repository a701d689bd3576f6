/**
 * How fast the maintenance regimen alone (no loading dose) approaches steady state, for a
 * model the closed form does not cover (saturable kinetics): the regimen as given, from
 * empty, is integrated cycle by cycle, and the figure is the first time t at which the AUC
 * over the preceding dosing cycle, W(t) = AUC(t) − AUC(t − τ) (AUC since the first dose while
 * t < τ), reaches 90% (95%) of AUCτ at steady state. W is continuous and, for compartment
 * models (cooperative systems: more drug in, more drug everywhere later), non-decreasing,
 * so the time is a root found by bisection — at a 90% level, so no small difference of large
 * numbers decides it. At cycle ends W is the AUC of that cycle, the older definition.
 */
import { buildSchedule } from '../../building/events.ts';
import { limits } from '../../scenario/limits.ts';
import type { Model } from '../../building/model.ts';
import type { SolverStats } from '../../solving/numerics/ode-system.ts';
import { solveSchedule } from '../../solving/solve.ts';
import type { CompartmentSystem } from '../../building/system.ts';
import { administrationsWithin, givenAdministrations, type DoseLines } from './cycle.ts';

export interface Approach {
  time90: number | null;
  time95: number | null;
  /** AUC over the first cycle of the regimen from empty. */
  firstAuc: number;
}

export interface Work {
  /** Dosing cycles integrated. */
  cycles: number;
  /** Integrations (or exact propagations) started. */
  integrations: number;
}

export function iteratedApproach(
  model: Model,
  system: CompartmentSystem,
  lines: DoseLines,
  period: number,
  steadyAuc: number[],
  tracked: number[],
  stats: SolverStats,
  work: Work,
): Approach[] {
  const layout = system.layout;
  const nc = layout.compartments;
  const n = system.dimension;
  /** State (with running AUCs) at the start of each cycle, left of its doses. */
  const starts: Float64Array[] = [new Float64Array(n)];
  const y = new Float64Array(n);
  const targets = [0.9, 0.95];
  /** Per compartment and target: the first cycle whose end has W ≥ target·AUCss. */
  const crossed: (number | null)[][] = tracked.map(() => targets.map(() => null));
  const firstAuc: number[] = tracked.map(() => NaN);
  const run = (from: number, to: number, state: Float64Array) => {
    const admins = administrationsWithin(givenAdministrations(lines, period, 0, to), from * period, to * period);
    const schedule = buildSchedule(admins, nc, from * period, to * period);
    work.integrations++;
    work.cycles += to - from;
    return solveSchedule({ ...model, administrations: admins, start: from * period, end: to * period }, system, schedule, state.slice(), stats).trajectory;
  };
  const pending = () => tracked.some((_, k) => steadyAuc[k] > 0 && crossed[k].some((v) => v === null));
  let done = 0;
  for (let size = 16; pending() && done < limits.steadyStateCycles; size = Math.min(4 * size, 256)) {
    const to = Math.min(done + size, limits.steadyStateCycles);
    const trajectory = run(done, to, starts[done]);
    for (let cycle = done + 1; cycle <= to; cycle++) {
      trajectory.stateAt(cycle * period, 'left', y);
      starts[cycle] = y.slice();
    }
    tracked.forEach((c, k) => {
      const auc = layout.auc[c];
      if (done === 0 && auc >= 0) firstAuc[k] = starts[1][auc];
      if (!(steadyAuc[k] > 0) || auc < 0) return;
      targets.forEach((f, j) => {
        for (let cycle = done + 1; cycle <= to && crossed[k][j] === null; cycle++) {
          if (starts[cycle][auc] - starts[cycle - 1][auc] >= f * steadyAuc[k]) crossed[k][j] = cycle;
        }
      });
    });
    done = to;
  }
  // The root within the crossing cycle n: W on [(n−1)τ, nτ] needs the AUC from (n−2)τ on.
  const roots = new Map<number, ReturnType<typeof run>>();
  const windowRun = (cycle: number) => {
    const from = Math.max(0, cycle - 2);
    let t = roots.get(cycle);
    if (!t) {
      t = run(from, cycle, starts[from]);
      roots.set(cycle, t);
    }
    return t;
  };
  return tracked.map((c, k) => {
    const times = targets.map((f, j) => {
      const cycle = crossed[k][j];
      if (cycle === null) return null;
      const trajectory = windowRun(cycle);
      const auc = layout.auc[c];
      const aucAt = (t: number) => {
        if (t <= 0) return 0;
        trajectory.stateAt(t, 'left', y);
        return y[auc];
      };
      const w = (t: number) => aucAt(t) - aucAt(t - period);
      const level = f * steadyAuc[k];
      let lo = (cycle - 1) * period;
      let hi = cycle * period;
      if (w(lo) >= level) return lo;
      for (let i = 0; i < 200 && hi - lo > 4 * Number.EPSILON * hi; i++) {
        const mid = 0.5 * (lo + hi);
        if (w(mid) >= level) hi = mid;
        else lo = mid;
      }
      return hi;
    });
    return { time90: times[0], time95: times[1], firstAuc: firstAuc[k] };
  });
}
