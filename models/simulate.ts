/**
 * The one entry point: scenario JSON in, concentration curves, exposure figures and
 * diagnostics out — or a list of problems, each with its JSON path. Never throws for
 * bad input or numerical failure.
 */
import { disposition, type Disposition } from './building/disposition.ts';
import { doseEvents, scheduleOf, timeResolution, type DoseEventKind, type Schedule } from './building/events.ts';
import { CurveProbe } from './figures/curve-probe.ts';
import { exposureFigures, type CompartmentFigures } from './figures/exposure.ts';
import { massBalance, massBalanceProblem, type MassBalance } from './figures/mass-balance.ts';
import type { Model } from './building/model.ts';
import { normaliseScenario } from './scenario/normalize.ts';
import type { Trajectory } from './solving/numerics/dense-store.ts';
import { choosePath, solveSchedule, type Solution, type SolutionPath } from './solving/solve.ts';
import { outputRows } from './result/output-rows.ts';
import { formatNumber } from './result/format-number.ts';
import { emptyStats, IntegrationFailure, type SolverStats } from './solving/numerics/ode-system.ts';
import { releaseTrajectory } from './solving/numerics/dense-store.ts';
import { realStabilityLimit } from './solving/numerics/stability.ts';
import type { Outcome, Problem } from './scenario/problems.ts';
import type { SolverMethod } from './scenario/schema.ts';
import { APPROACH_DEFINITION, steadyStateFigures, type SteadyStateFigures } from './figures/steady-state.ts';
import { CompartmentSystem, type StateLayout } from './building/system.ts';
import { displayUnit } from './scenario/units.ts';
import { limits } from './scenario/limits.ts';
import { predictObservations, type ResultClock } from './levels/predictions.ts';
import type { ObservationFit } from './levels/observation.ts';
import { isoDateTime, formatOffset } from './levels/clock.ts';
import { unitsPerHour } from './scenario/instants.ts';

// Re-exported for the server and the tests, which take them from the entry point.
export { choosePath, solveSchedule, type Solution, type SolutionPath } from './solving/solve.ts';
export { outputRows } from './result/output-rows.ts';
export { formatNumber } from './result/format-number.ts';

export interface CompartmentSeries {
  id: string;
  label: string;
  volume: number | null;
  amount: Float64Array;
  /** Null for a compartment without a volume. */
  concentration: Float64Array | null;
}

export interface Diagnostics {
  path: SolutionPath;
  requestedMethod: SolverMethod;
  methodsUsed: string[];
  rtol: number | null;
  atol: number | null;
  step: number | null;
  acceptedSteps: number;
  rejectedSteps: number;
  derivativeEvaluations: number;
  jacobianEvaluations: number;
  factorizations: number;
  stiffSwitches: number;
  /** Matrix exponentials computed by the exact path. */
  propagators: number;
  /** Pieces between breakpoints (dose discontinuities). */
  segments: number;
  disposition: Disposition;
  massBalance: MassBalance;
  warnings: string[];
}

export interface ResultUnits {
  amount: string;
  volume: string;
  time: string;
  concentration: string;
  auc: string;
  rateConstant: string;
}

export interface SimulationEvent {
  time: number;
  kind: DoseEventKind;
  compartment: string;
  value: number;
  line: number;
  given: number;
}

export interface SimulationResult {
  title: string;
  /** The subject's covariates (given and derived) and the quantities their relations changed; null without a subject. */
  subject: Model['subject'];
  units: ResultUnits;
  /** Reported times; a time appears twice at a bolus: the value just before, then just after. */
  times: Float64Array;
  compartments: CompartmentSeries[];
  events: SimulationEvent[];
  metrics: { compartments: CompartmentFigures[]; steadyState: SteadyStateFigures | null };
  diagnostics: Diagnostics;
  /** The clock, when the scenario writes date-times; null otherwise. */
  clock: ResultClock | null;
  /** Measured levels with the model's prediction at each time and the residual (observed − predicted). */
  observations: ObservationFit[];
}

export function simulate(input: unknown): Outcome<SimulationResult> {
  const model = normaliseScenario(input);
  return model.ok ? simulateModel(model.value) : model;
}

export function simulateModel(model: Model): Outcome<SimulationResult> {
  const system = new CompartmentSystem(model);
  const schedule = scheduleOf(model);
  const stats = emptyStats();
  let solution: Solution;
  try {
    solution = solveSchedule(model, system, schedule, new Float64Array(system.dimension), stats);
  } catch (e) {
    return { ok: false, problems: [numericalProblem(e, model, system.layout)] };
  }
  const rows = outputRows(model.outputTimes, schedule);
  const series = sampleSeries(model, solution.trajectory, rows, new Float64Array(system.dimension));
  const firstBad = firstNonFinite(series);
  if (firstBad) return { ok: false, problems: [firstBad] };
  // A run whose own balance fails is refused, never returned as a plain success.
  const balance = massBalance(model, system.layout, solution.final);
  const unbalanced = massBalanceProblem(model, balance);
  if (unbalanced) return { ok: false, problems: [unbalanced] };

  const warnings: string[] = [];
  const dispo = disposition(system);
  warnings.push(...fixedStepWarnings(model, dispo), ...negativeAmountWarnings(model, rows.times, series), ...beyondEndWarnings(model), ...shortInfusionWarnings(model));
  const probe = new CurveProbe(solution.trajectory, system, schedule);
  const compartmentFigures = exposureFigures(model, system.layout, probe);
  const steady = guardedSteadyState(model, system, stats);
  if (steady && !steady.reached) warnings.push(steady.message);
  if (steady?.reached) warnings.push(...courseEndWarnings(model, steady));

  const units = resultUnits(model);
  const observations = predictObservations(model, solution.trajectory);
  // Everything is read off the solution: its dense output goes back for the next run in this thread.
  releaseTrajectory(solution.trajectory);
  return {
    ok: true,
    value: {
      title: model.title,
      subject: model.subject,
      units,
      times: rows.times,
      compartments: series,
      events: doseEvents(model).map((e) => ({ ...e, compartment: model.compartments[e.compartment].id })),
      metrics: { compartments: compartmentFigures, steadyState: steady },
      diagnostics: {
        path: choosePath(model),
        requestedMethod: model.solver.method,
        methodsUsed: solution.methodsUsed,
        rtol: choosePath(model) === 'adaptive' ? model.solver.rtol : null,
        atol: choosePath(model) === 'adaptive' ? model.solver.atol : null,
        step: choosePath(model) === 'fixed' ? model.solver.step : null,
        ...stats,
        propagators: solution.propagators,
        segments: schedule.breakpoints.length,
        disposition: dispo,
        massBalance: balance,
        warnings,
      },
      clock: resultClock(model),
      observations,
    },
  };
}

function resultClock(model: Model): ResultClock | null {
  const c = model.clock;
  if (c === null) return null;
  return {
    origin: isoDateTime(c.originMs, c.zoneMinutes),
    zone: formatOffset(c.zoneMinutes),
    zoneGiven: c.zoneGiven,
    originFrom: c.originFrom,
    originMs: c.originMs,
    zoneMinutes: c.zoneMinutes,
    hoursPerTimeUnit: 1 / unitsPerHour(model.units),
  };
}

/** The steady-state search runs many extra integrations; a failure there must not lose the curves. */
function guardedSteadyState(model: Model, system: CompartmentSystem, stats: SolverStats): SteadyStateFigures | null {
  try {
    return steadyStateFigures(model, system, stats);
  } catch (e) {
    const why = e instanceof IntegrationFailure ? numericalProblem(e, model, system.layout).message : e instanceof Error ? e.message : String(e);
    return {
      period: NaN,
      lines: [],
      reached: false,
      message: `steady state not determined: the search over dosing cycles failed (${why})`,
      method: 'iterated',
      cycles: 0,
      residual: NaN,
      compartments: [],
      approachDefinition: APPROACH_DEFINITION,
      work: { cycles: 0, integrations: 0, steps: 0 },
      profile: null,
    };
  }
}

export function resultUnits(model: Model): ResultUnits {
  const u = model.units;
  const concentration = displayUnit('concentration', u);
  return {
    amount: u.amount,
    volume: u.volume,
    time: u.time,
    concentration,
    auc: `${concentration}·${u.time}`,
    rateConstant: displayUnit('rateConstant', u),
  };
}

/**
 * Amounts and concentrations at the output rows. Trajectories begin just after the first
 * breakpoint's boluses, so the row just before a bolus at the very start is the initial state.
 */
function sampleSeries(
  model: Model,
  trajectory: Trajectory,
  rows: { times: Float64Array; sides: Uint8Array },
  initial: Float64Array,
): CompartmentSeries[] {
  const count = rows.times.length;
  const series = model.compartments.map((c) => ({
    id: c.id,
    label: c.label,
    volume: c.volume,
    amount: new Float64Array(count),
    concentration: c.volume === null ? null : new Float64Array(count),
  }));
  trajectory.sample(rows.times, rows.sides, (row, sampled) => {
    const state = rows.sides[row] === 0 && rows.times[row] === model.start ? initial : sampled;
    for (let i = 0; i < series.length; i++) {
      const s = series[i];
      s.amount[row] = state[i];
      if (s.concentration && s.volume !== null) s.concentration[row] = state[i] / s.volume;
    }
  });
  return series;
}

function firstNonFinite(series: CompartmentSeries[]): Problem | null {
  for (const s of series) {
    const i = s.amount.findIndex((v) => !Number.isFinite(v));
    if (i >= 0) return { path: 'solver', message: `the solution became non-finite in compartment '${s.id}'` };
  }
  return null;
}

function stateName(component: number | null, model: Model, layout: StateLayout): string {
  if (component === null) return 'the state';
  if (component < layout.compartments) return `compartment '${model.compartments[component].id}'`;
  if (component === layout.eliminated) return 'the eliminated amount';
  const c = Array.from(layout.auc).indexOf(component);
  return c >= 0 ? `compartment '${model.compartments[c].id}' (its running AUC)` : 'the state';
}

function numericalProblem(e: unknown, model: Model, layout: StateLayout): Problem {
  if (e instanceof IntegrationFailure) {
    const what = {
      'step-size-underflow': 'the step size fell below what the arithmetic can resolve',
      // A fixed step's count is known in advance; its own message gives the count and the fix.
      'too-many-steps': model.solver.step !== null ? e.message : `more than solver.maxSteps (${model.solver.maxSteps}) steps were needed`,
      'non-finite': 'the solution became non-finite (overflow or division by zero)',
      'too-much-memory': e.message,
    }[e.reason];
    // With a fixed step, the step is what sets the count of steps and the memory they take.
    const stepBound = model.solver.step !== null && (e.reason === 'too-many-steps' || e.reason === 'too-much-memory');
    // A fixed step's budget is refused before the first step: no failure happened at a time in a state.
    if (stepBound) return { path: 'solver.step', message: e.message };
    return {
      path: 'solver',
      message: `numerical failure at t = ${formatNumber(e.time)} ${model.units.time} in ${stateName(e.component, model, layout)}: ${what}`,
    };
  }
  const message = e instanceof Error ? e.message : String(e);
  return { path: 'solver', message: `numerical failure: ${message}` };
}


function fixedStepWarnings(model: Model, dispo: Disposition): string[] {
  const h = model.solver.step;
  const limit = realStabilityLimit[model.solver.method];
  if (h === null || limit === undefined) return [];
  const hl = h * dispo.fastestRate;
  const unit = model.units.time;
  if (hl > limit) {
    return [
      `the fixed step ${formatNumber(h)} ${unit} is beyond the stability limit of ${model.solver.method} for the fastest rate in the model (${formatNumber(dispo.fastestRate)} 1/${unit}: h·λ = ${formatNumber(hl)} > ${formatNumber(limit)}); the curve is not to be trusted — use a step below ${formatNumber(limit / dispo.fastestRate)} ${unit} or method 'auto'`,
    ];
  }
  if (hl > 0.2) {
    return [
      `the fixed step ${formatNumber(h)} ${unit} is coarse for the fastest rate in the model (h·λ = ${formatNumber(hl)}); expect visible error — a step below ${formatNumber(0.2 / dispo.fastestRate)} ${unit} or method 'auto' is advised`,
    ];
  }
  return [];
}

function negativeAmountWarnings(model: Model, times: Float64Array, series: CompartmentSeries[]): string[] {
  const out: string[] = [];
  const scale = Math.max(...series.map((s) => s.amount.reduce((m, v) => Math.max(m, Math.abs(v)), 0)));
  const tolerance = 10 * model.solver.atol + 1e-9 * scale;
  for (const s of series) {
    const i = s.amount.findIndex((v) => v < -tolerance);
    if (i >= 0) {
      out.push(
        `the amount in compartment '${s.id}' goes negative (${formatNumber(s.amount[i])} ${model.units.amount} at t = ${formatNumber(times[i])} ${model.units.time}), beyond round-off: the method or its step is not adequate`,
      );
    }
  }
  return out;
}

function beyondEndWarnings(model: Model): string[] {
  return model.doseLines
    .filter((l) => l.beyondEnd > 0)
    .map((l) => `doses[${l.line}]: ${l.beyondEnd} dose${l.beyondEnd > 1 ? 's arrive' : ' arrives'} at or after the end of the simulated span and ${l.beyondEnd > 1 ? 'are' : 'is'} not included`);
}

/** Infusions shorter than the schedule's time resolution are given as boluses (events.ts); say so. */
function shortInfusionWarnings(model: Model): string[] {
  const resolution = timeResolution(model.start, model.end);
  const seen = new Set<number>();
  for (const a of model.administrations) if (a.duration > 0 && a.duration <= resolution) seen.add(a.line);
  return [...seen].map(
    (line) =>
      `doses[${line}]: an infusion of ${formatNumber(model.doseLines.find((l) => l.line === line)?.duration ?? 0)} ${model.units.time} is shorter than the time resolution of this span (${formatNumber(resolution)} ${model.units.time}) and is given as a bolus`,
  );
}

/**
 * A steady state computed is not a steady state reached: when the simulated course ends
 * before the maintenance regimen comes within 90% of it, say so, with what the steady state
 * would be against the target window, so nobody reads the steady-state figures as the course's.
 */
export function courseEndWarnings(model: Model, steady: SteadyStateFigures): string[] {
  // A regimen that stopped within the span was never going to reach steady state; say it only of
  // one still running: a dose left out by the end, or a last dosing interval that reaches the end.
  const running = steady.lines.some((line) => {
    const l = model.doseLines.find((d) => d.line === line);
    if (!l || l.every === null) return false;
    return l.nextGiven !== null || l.firstGiven + l.count * l.every >= model.end - 1e-9 * l.every;
  });
  if (!running) return [];
  const firstDose = Math.min(...steady.lines.map((line) => model.doseLines.find((l) => l.line === line)?.firstGiven ?? model.start));
  const elapsed = model.end - firstDose;
  const t = model.units.time;
  const c = displayUnit('concentration', model.units);
  const out: string[] = [];
  for (const figures of steady.compartments) {
    if (figures.timeTo90 !== null && figures.timeTo90 <= elapsed) continue;
    const takes =
      figures.timeTo90 === null
        ? `90% of steady state takes more than ${limits.steadyStateCycles} dosing cycles`
        : `90% of steady state takes ${formatNumber(figures.timeTo90)} ${t} from the first maintenance dose at ${formatNumber(firstDose)} ${t}`;
    const index = model.compartments.findIndex((x) => x.id === figures.compartment);
    const against = model.thresholds
      .filter((w) => w.compartment === index)
      .flatMap((w) => [
        w.below !== null && figures.cmax > w.below ? `, above the window's upper edge of ${formatNumber(w.below)} ${c}` : '',
        w.above !== null && figures.trough < w.above ? `; the trough would be ${formatNumber(figures.trough)} ${c}, below the window's lower edge of ${formatNumber(w.above)} ${c}` : '',
      ])
      .join('');
    out.push(
      `'${figures.compartment}' is not at steady state by the end of the span (${formatNumber(model.end)} ${t}): ${takes}; at steady state the peak would be ${formatNumber(figures.cmax)} ${c}${against} — the steady-state figures describe the regimen continued, not this course`,
    );
  }
  return out;
}
