/**
 * One virtual subject: its covariates and effects from its own random numbers, its model, and
 * only what the population result needs — concentrations on the output grid and the figures
 * of the chosen periods — never the whole single-subject result.
 */
import type { Model } from '../building/model.ts';
import { buildSchedule, type Schedule } from '../building/events.ts';
import { CompartmentSystem } from '../building/system.ts';
import { CurveProbe } from '../figures/curve-probe.ts';
import { exposureFigures, finalInterval, intervalStarts, type CompartmentFigures, type FigureWindow } from '../figures/exposure.ts';
import { massBalance, massBalanceProblem } from '../figures/mass-balance.ts';
import { cycleStructure, steadyStateFigures, type CycleStructure } from '../figures/steady-state.ts';
import { buildModel, dosesDependOnSubject, type SubjectVariant } from '../scenario/normalize.ts';
import type { Problem } from '../scenario/problems.ts';
import type { Period, Scenario } from '../scenario/schema.ts';
import { emptyStats, IntegrationFailure } from '../solving/numerics/ode-system.ts';
import { solveSchedule } from '../solving/solve.ts';
import type { PropagatorCache } from '../solving/linear-path.ts';
import { releaseTrajectory, type Trajectory } from '../solving/numerics/dense-store.ts';
import { correlate } from './correlation.ts';
import { subjectCovariates } from './covariates.ts';
import { FIGURES, type FigureLayout } from './layout.ts';
import type { PopulationPlan } from './plan.ts';
import { STREAMS, SubjectRandom } from './random.ts';

/** Status bits of a subject. */
export const NO_STEADY_STATE = 1;

/** Doses and their schedule shared by every subject of one scenario (when no dose reads the subject). */
interface SharedDoses {
  doses: NonNullable<SubjectVariant['doses']>;
  schedule: Schedule;
  /** The times that open dosing intervals (intervalStarts). */
  starts: Float64Array;
  /** The steady state's cycle (cycleStructure): it reads only the doses and which compartments the transfers join. */
  cycle?: CycleStructure | null;
}

/** Scratch reused from subject to subject (one per thread). */
export class SubjectScratch {
  /** Per scenario (the plan's, each regimen's): its shared doses, or null when they depend on the subject. */
  readonly doses = new Map<Scenario, SharedDoses | null>();
  readonly raw: Float64Array;
  readonly effects: Float64Array;
  readonly pathIndex: Map<string, number>;
  readonly sides: Uint8Array;
  constructor(plan: PopulationPlan) {
    this.raw = new Float64Array(plan.varying.length);
    this.effects = new Float64Array(plan.varying.length);
    this.pathIndex = new Map(plan.varying.map((v, i) => [v.path, i]));
    // Bands are read just after any dose given at an output time.
    this.sides = new Uint8Array(plan.template.outputTimes.length).fill(1);
  }
}

/** Subject i's covariates and effects: the same numbers for every regimen (common random numbers). */
export function subjectVariant(plan: PopulationPlan, i: number, scratch: SubjectScratch): SubjectVariant {
  const random = new SubjectRandom(plan.seed, i);
  const subject = subjectCovariates(plan.covariates, plan.scenario.subject, i, random);
  const n = plan.varying.length;
  for (let j = 0; j < n; j++) scratch.raw[j] = random.normal(STREAMS.effects, j);
  if (plan.factor) correlate(plan.factor, n, scratch.raw, scratch.effects);
  else scratch.effects.set(scratch.raw);
  const effects = scratch.effects;
  const index = scratch.pathIndex;
  return { subject, effect: (path) => effects[index.get(path) ?? -1] ?? 0, outputTimes: plan.template.outputTimes };
}

export interface SubjectOutcome {
  status: number;
  methods: string[];
  /** Mass balance of the span's run (relative), or 0 when only the steady state was computed. */
  balance: number;
  /** Why the steady state was not found, when it was not. */
  steadyMessage: string | null;
}

export type SubjectResult = { ok: true; value: SubjectOutcome } | { ok: false; problems: Problem[] };

/**
 * Runs subject i of `scenario` (the plan's, or a regimen's copy): writes its concentrations at
 * the output times into `grid` (banded compartment b at grid[b·T + j]) when `grid` is given, and
 * its figures for `layout`'s periods into `figures`.
 */
export function runSubject(
  plan: PopulationPlan,
  scenario: Scenario,
  layout: FigureLayout,
  variant: SubjectVariant,
  grid: Float32Array | null,
  figures: Float64Array,
  scratch: SubjectScratch,
): SubjectResult {
  // Doses that read nothing of the subject are read, expanded and scheduled once per scenario.
  const shared = scratch.doses.get(scenario);
  const built = buildModel(scenario, shared ? { ...variant, doses: shared.doses } : variant);
  if (!built.ok) return built;
  const model: Model = { ...built.value, thresholds: layout.thresholds };
  if (shared === undefined) {
    const independent = !dosesDependOnSubject(scenario);
    const doses = { administrations: model.administrations, lines: model.doseLines };
    const schedule = buildSchedule(model.administrations, model.compartments.length, model.start, model.end);
    scratch.doses.set(scenario, independent ? { doses, schedule, starts: scheduleStarts(model, schedule) } : null);
  }
  const system = new CompartmentSystem(model);
  const stats = emptyStats();
  const outcome: SubjectOutcome = { status: 0, methods: [], balance: 0, steadyMessage: null };
  const intervalPeriods = layout.periods.filter((p) => p !== 'steady state');
  // The run's propagators, shared with the steady-state cycle of the same subject (the same matrix).
  let propagators: PropagatorCache | undefined;
  try {
    if (grid || intervalPeriods.length > 0) {
      const schedule = scratch.doses.get(scenario)?.schedule ?? buildSchedule(model.administrations, model.compartments.length, model.start, model.end);
      const solution = solveSchedule(model, system, schedule, new Float64Array(system.dimension), stats);
      outcome.methods = solution.methodsUsed;
      propagators = solution.propagatorCache;
      const balance = massBalance(model, system.layout, solution.final);
      const unbalanced = massBalanceProblem(model, balance);
      if (unbalanced) return { ok: false, problems: [unbalanced] };
      outcome.balance = balance.relativeError;
      if (grid) sampleGrid(model, layout, solution.trajectory, scratch.sides, grid);
      if (intervalPeriods.length > 0) {
        const probe = new CurveProbe(solution.trajectory, system, schedule);
        const starts = scratch.doses.get(scenario)?.starts ?? scheduleStarts(model, schedule);
        layout.periods.forEach((period, p) => {
          if (period === 'steady state') return;
          const window = periodWindow(model, starts, period);
          const found = window ? exposureFigures(model, system.layout, probe, window) : null;
          writeWindow(layout, p, found, window, figures, plan.day);
        });
      }
      // The next subject reuses the dense output's memory (nothing here holds the trajectory).
      releaseTrajectory(solution.trajectory);
    }
    const steadyAt = layout.periods.indexOf('steady state');
    if (steadyAt >= 0) {
      // Subjects that share their doses share the cycle's structure too (made by the first of them).
      const common = scratch.doses.get(scenario);
      if (common && common.cycle === undefined) common.cycle = cycleStructure(model, system.layout.compartments);
      const steady = steadyStateFigures(model, system, stats, { approach: false, profile: false, account: false, sharePropagators: propagators, ...(common ? { structure: common.cycle } : {}) });
      if (!steady?.reached) {
        outcome.status |= NO_STEADY_STATE;
        outcome.steadyMessage = steady?.message ?? 'no repeated dose line';
        for (let b = 0; b < layout.banded.length; b++) writeMissing(layout, steadyAt, b, figures);
      } else {
        const day = plan.day;
        steady.compartments.forEach((c, b) => {
          const at = layout.base[steadyAt * layout.banded.length + b];
          const values = [c.cmax, c.tmax, c.cmin, c.trough, c.auc, c.cavg, (c.auc * day) / steady.period];
          for (let f = 0; f < FIGURES.length; f++) figures[at + f] = values[f];
          c.windows.forEach((w, k) => (figures[at + FIGURES.length + k] = w.fractionInWindow));
        });
      }
    }
  } catch (e) {
    const message = e instanceof IntegrationFailure ? `numerical failure at t = ${e.time}: ${e.message}` : e instanceof Error ? e.message : String(e);
    return { ok: false, problems: [{ path: 'solver', message }] };
  }
  return { ok: true, value: outcome };
}

function sampleGrid(model: Model, layout: FigureLayout, trajectory: Trajectory, sides: Uint8Array, grid: Float32Array): void {
  const banded = layout.banded;
  const volumes = Float64Array.from(banded, (c) => model.compartments[c].volume as number);
  trajectory.sampleInto(model.outputTimes, sides, Int32Array.from(banded), volumes, grid, model.outputTimes.length);
}

/** The times that open dosing intervals, snapped to the schedule's breakpoints. */
function scheduleStarts(model: Model, schedule: Schedule): Float64Array {
  return intervalStarts(model, Float64Array.from(schedule.breakpoints, (b) => b.time));
}

/**
 * The time window of a dosing-interval period (`starts`: intervalStarts), or null when this
 * subject's span lacks it. The final dose's interval, with no dose due after it, is read over
 * one dosing interval — as long as the one before it — when the span covers that, its trough
 * the level then (where the next dose would fall due, common practice); a span that ends sooner
 * cuts it short (no trough), and "last interval" is then the interval before it (plan.ts
 * lastIntervalNote says so in the result).
 */
export function periodWindow(model: Model, starts: Float64Array, period: Period): FigureWindow | null {
  const final = finalInterval(model, starts);
  const n = starts.length;
  const window = (k: number): FigureWindow | null => {
    if (k < 0 || k >= n) return null;
    if (k + 1 < n) return { start: starts[k], end: starts[k + 1], troughAtEnd: true };
    return final;
  };
  if (period === 'first interval') return window(0);
  if (period === 'last interval') return final.troughAtEnd || n < 2 ? window(n - 1) : window(n - 2);
  if (typeof period === 'number') return window(period - 1);
  return null;
}

function writeWindow(layout: FigureLayout, p: number, found: CompartmentFigures[] | null, window: FigureWindow | null, figures: Float64Array, day: number): void {
  for (let b = 0; b < layout.banded.length; b++) {
    const f = found?.[b];
    if (!f || !window) {
      writeMissing(layout, p, b, figures);
      continue;
    }
    const at = layout.base[p * layout.banded.length + b];
    const span = window.end - window.start;
    const o = f.overall;
    const values = [o.cmax, o.tmax - window.start, o.cmin, window.troughAtEnd ? o.cEnd : NaN, o.auc, o.auc / span, (o.auc * day) / span];
    for (let k = 0; k < FIGURES.length; k++) figures[at + k] = values[k];
    o.windows.forEach((w, k) => (figures[at + FIGURES.length + k] = w.fractionInWindow));
  }
}

function writeMissing(layout: FigureLayout, p: number, b: number, figures: Float64Array): void {
  const at = layout.base[p * layout.banded.length + b];
  figures.fill(NaN, at, at + FIGURES.length + layout.windows[b].length);
}
