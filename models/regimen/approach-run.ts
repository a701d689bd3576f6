/**
 * A regimen given from empty, interval by interval: the figures of each dosing interval (its
 * trough just before the next dose, peak, AUC, the shares in the targets' windows), handed to a
 * visitor until it has seen enough. Simulated in chunks of 8, 16, 32 … intervals, each chunk from
 * the state the last one ended in, so a regimen that reaches its window early costs little and one
 * that approaches slowly is not simulated twice.
 */
import type { DoseLineSummary, Model, ModelThreshold } from '../building/model.ts';
import { scheduleOf } from '../building/events.ts';
import type { CompartmentSystem } from '../building/system.ts';
import { CurveProbe } from '../figures/curve-probe.ts';
import { exposureFigures } from '../figures/exposure.ts';
import { releaseTrajectory } from '../solving/numerics/dense-store.ts';
import type { SolverStats } from '../solving/numerics/ode-system.ts';
import { solveSchedule } from '../solving/solve.ts';
import { chunkModel, type RegimenSpec } from './regimen-model.ts';
import type { ExposureRead } from './target-values.ts';

export interface ApproachSetup {
  base: Model;
  system: CompartmentSystem;
  line: DoseLineSummary;
  spec: RegimenSpec;
  /** A first dose of this amount in place of the first maintenance dose; null for none. */
  loading: number | null;
  thresholds: ModelThreshold[];
  stats: SolverStats;
}

/** Visits interval k (0 is the first) with its figures per compartment; returns true when done. */
export type IntervalVisitor = (k: number, read: (compartment: number) => ExposureRead | null) => boolean;

/** Runs until the visitor is done or `maxIntervals` have been simulated; returns the intervals simulated. */
export function walkIntervals(s: ApproachSetup, maxIntervals: number, visit: IntervalVisitor): number {
  const { base, system } = s;
  let y = new Float64Array(system.dimension);
  let from = 0;
  let size = 8;
  while (from < maxIntervals) {
    const to = Math.min(maxIntervals, from + size);
    const model = chunkModel(base, s.line, s.spec, s.loading, from, to, s.thresholds);
    const schedule = scheduleOf(model);
    const run = solveSchedule(model, system, schedule, y, s.stats);
    const figures = exposureFigures(model, system.layout, new CurveProbe(run.trajectory, system, schedule));
    releaseTrajectory(run.trajectory);
    const final = run.final;
    const byCompartment = new Map(figures.map((f) => [base.compartments.findIndex((c) => c.id === f.compartment), f]));
    const count = Math.min(to - from, ...figures.map((f) => f.intervals.length));
    for (let i = 0; i < count; i++) {
      const read = (c: number): ExposureRead | null => {
        const f = byCompartment.get(c);
        if (!f) return null;
        const iv = f.intervals[i];
        // The chunk's last interval has no next dose within the span: its trough is the end state.
        const trough = iv.trough ?? final[c] / (base.compartments[c].volume as number);
        return { trough, peak: iv.cmax, auc: iv.auc, windows: iv.windows };
      };
      if (visit(from + i, read)) return from + i + 1;
    }
    y = final.slice();
    from = to;
    size *= 2;
  }
  return from;
}
