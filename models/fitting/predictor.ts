/**
 * The model's prediction at each observation's time for a parameter vector: the scenario with
 * the estimated quantities written in (wls) or the subject's effects (map) → buildModel → the
 * engine's path → the continuous solution at the observation times. What does not depend on
 * the parameters is kept: the output times (passed to buildModel), the paths and the index of
 * effects. Building a model costs about 0.4 ms on the orvanix sample, as much as solving it, so
 * nothing more is cached.
 *
 * Saturable models take the adaptive path at rtol 1e-10 (atol 1e-12): the difference quotients
 * of the Jacobian divide the prediction's error by the step, so the prediction must be smooth in
 * the parameters far below the step (1e-10 / 5e-4 ≈ 2e-7 relative in a derivative).
 */
import type { Model } from '../building/model.ts';
import { scheduleOf } from '../building/events.ts';
import { CompartmentSystem } from '../building/system.ts';
import { predictObservations } from '../levels/predictions.ts';
import { buildModel, type SubjectVariant } from '../scenario/normalize.ts';
import type { ModelQuantity, Scenario, Subject } from '../scenario/schema.ts';
import { releaseTrajectory, type Trajectory } from '../solving/numerics/dense-store.ts';
import { emptyStats } from '../solving/numerics/ode-system.ts';
import { choosePath, solveSchedule } from '../solving/solve.ts';
import type { Parameters } from './parameters.ts';
import { isAdjusted, withQuantities } from './quantities.ts';

/** The adaptive path's tolerances during a fit (see the file comment). */
export const FIT_RTOL = 1e-10;
export const FIT_ATOL = 1e-12;

/** The quantity as written, with `value` (in the scenario's units) as its typical and its cv dropped; its covariate relations kept. */
export function writtenWith(q: ModelQuantity, value: number | string): ModelQuantity {
  if (!isAdjusted(q) || q.covariates === undefined) return value;
  const { cv: _cv, variation: _variation, ...rest } = q;
  return { ...rest, typical: value };
}

export class Predictor {
  private readonly paths: string[];
  private readonly index: Map<string, number>;
  private readonly outputTimes: Float64Array;
  private readonly values: ModelQuantity[];
  evaluations = 0;

  constructor(
    readonly scenario: Scenario,
    readonly params: Parameters,
    template: Model,
  ) {
    this.paths = params.plan.estimated.map((e) => e.slot.path);
    this.index = new Map([...this.paths, ...params.plan.others].map((p, i) => [p, i]));
    this.outputTimes = template.outputTimes;
    this.values = new Array<ModelQuantity>(this.paths.length);
  }

  /** The model for parameters p, or null when it cannot be built (a value out of its range). */
  model(p: Float64Array): Model | null {
    const { params } = this;
    let s = this.scenario;
    let effect: (path: string) => number = () => 0;
    if (params.map) {
      const d = params.setEffects(p);
      const index = this.index;
      effect = (path) => {
        const i = index.get(path);
        return i === undefined ? 0 : d[i];
      };
    } else {
      params.plan.estimated.forEach((e, i) => {
        this.values[i] = writtenWith(e.slot.written, params.written(i, params.value(i, p)));
      });
      s = withQuantities(this.scenario, this.paths, this.values);
    }
    const variant: SubjectVariant = { subject: s.subject as Subject, effect, outputTimes: this.outputTimes };
    const built = buildModel(s, variant);
    if (!built.ok) return null;
    const m = built.value;
    return choosePath(m) === 'adaptive' ? { ...m, solver: { ...m.solver, rtol: FIT_RTOL, atol: Math.min(m.solver.atol, FIT_ATOL) } } : m;
  }

  /** Solves the model and hands its trajectory to `read`; false when it cannot be built or solved. */
  solve(p: Float64Array, read: (model: Model, trajectory: Trajectory) => void): boolean {
    this.evaluations++;
    const m = this.model(p);
    if (!m) return false;
    const system = new CompartmentSystem(m);
    let trajectory: Trajectory;
    try {
      trajectory = solveSchedule(m, system, scheduleOf(m), new Float64Array(system.dimension), emptyStats()).trajectory;
    } catch {
      return false;
    }
    try {
      read(m, trajectory);
    } finally {
      releaseTrajectory(trajectory);
    }
    return true;
  }

  /** Predictions at every observation's time (all of them, in scenario order) into `out`. */
  predict(p: Float64Array, out: Float64Array): boolean {
    let finite = true;
    const ok = this.solve(p, (m, t) => {
      predictObservations(m, t).forEach((o, i) => {
        out[i] = o.predicted;
        if (!Number.isFinite(o.predicted)) finite = false;
      });
    });
    return ok && finite;
  }
}
