/**
 * Steady state of the maintenance regimen (the repeating dose lines): the periodic
 * solution that one dosing cycle maps onto itself, its figures over one cycle, and how
 * fast the regimen alone approaches it.
 *
 * - Linear models, whatever method integrates the curves: in closed form,
 *   x* = (I − e^{Mτ})⁻¹·g (steady-state/linear.ts); the approach in closed form too.
 * - Saturable models: the cycle map is iterated, with Newton steps (steady-state/fixed-point.ts);
 *   the approach by integrating the regimen from empty (steady-state/approach.ts).
 * - The cycle itself: which lines repeat, their period, their doses folded into one cycle
 *   (steady-state/cycle.ts); what can be ruled out before any cycle is run (steady-state/capacity.ts).
 */
import { doseLineName } from '../result/dose-words.ts';
import { propagateExact, PropagatorCache, scheduleInputs } from '../solving/linear-path.ts';
import { CurveProbe } from './curve-probe.ts';
import { exposureFigures, type WindowFigures } from './exposure.ts';
import type { Model } from '../building/model.ts';
import type { SolverStats } from '../solving/numerics/ode-system.ts';
import { formatNumber } from '../result/format-number.ts';
import { solveSchedule } from '../solving/solve.ts';
import { releaseTrajectory } from '../solving/numerics/dense-store.ts';
import { iteratedApproach, type Approach, type Work } from './steady-state/approach.ts';
import { capacityAccount, capacityProblem } from './steady-state/capacity.ts';
import { cycleStructure, givenAdministrations, type CycleStructure, type DoseLines } from './steady-state/cycle.ts';
import { iterate, type CycleMap, type Found, type SearchSettings } from './steady-state/fixed-point.ts';
import { linearApproach, linearPeriodicState } from './steady-state/linear.ts';
import { cycleProfile, type CycleProfile } from './steady-state/profile.ts';
import type { CompartmentSystem } from '../building/system.ts';

export { cycleAdministrations, cycleStructure, maintenanceLines, maintenancePeriod, trappedCompartments, type CycleStructure } from './steady-state/cycle.ts';

/** What timeTo90/timeTo95 measure (returned with the figures so that every reader can quote it). */
export const APPROACH_DEFINITION =
  'time from the first maintenance dose, the regimen given alone from empty, until the AUC over the preceding dosing cycle ' +
  '(the AUC since the first dose while less than one cycle has passed) reaches 90% (95%) of the AUC over a cycle at steady state; ' +
  "for a linear model this is when one cycle's doses given alone have delivered 90% (95%) of their AUC to infinity " +
  '(ln 10/k and ln 20/k for IV boluses into one compartment); it is not the time at which the concentration reaches 90% of its ' +
  'steady-state value, which differs for infusions and oral doses';

export interface SteadyStateCompartment {
  compartment: string;
  /** Figures over one dosing cycle at steady state; times are from the start of the cycle. */
  cmax: number;
  tmax: number;
  cmin: number;
  tmin: number;
  /** Concentration at the end of the cycle, just before the next cycle's first dose. */
  trough: number;
  auc: number;
  cavg: number;
  fluctuation: number | null;
  /** AUC over a cycle at steady state / AUC over the first cycle from empty. */
  accumulationRatio: number | null;
  /** Time to 90% (95%) of steady state, as APPROACH_DEFINITION says; null if not reached within the cycle limit. */
  timeTo90: number | null;
  timeTo95: number | null;
  /** The dosing cycle (the first is 1) in which timeTo90 (timeTo95) falls. */
  cyclesTo90: number | null;
  cyclesTo95: number | null;
  windows: WindowFigures[];
}

/** What the steady-state figures cost: counted, so that tests can bound it without timing. */
export interface SteadyStateWork {
  /** Dosing cycles integrated or propagated: the search, the figures' cycle and the approach. */
  cycles: number;
  /** Integrations (or exact propagations) started. */
  integrations: number;
  /** Integrator steps accepted (0 for the exact path). */
  steps: number;
}

export interface SteadyStateFigures {
  /** Length of one dosing cycle. */
  period: number;
  /** Dose lines (indices into doses) that make up the maintenance regimen. */
  lines: number[];
  reached: boolean;
  /** Plain-words account of how it was found, or why not (empty when reached and not asked for: SteadyStateOptions.account). */
  message: string;
  method: 'closed-form' | 'iterated';
  /** Dosing cycles simulated to find it and its figures (the closed form needs two). */
  cycles: number;
  /** Largest |P(x) − x| relative to each compartment's amount (with its floor) at the accepted state: P one cycle as integrated. */
  residual: number;
  compartments: SteadyStateCompartment[];
  /** What timeTo90/timeTo95 mean (APPROACH_DEFINITION). */
  approachDefinition: string;
  work: SteadyStateWork;
  /** The steady-state cycle itself, for plotting; null when no steady state was found. */
  profile: CycleProfile | null;
}

/** Tightest relative tolerance the steady-state search asks of the integrator. */
const TIGHTEST_RTOL = 1e-13;

/**
 * How closely a saturable steady state is determined: 100·rtol (a cycle's integration error
 * is a few rtol, and the acceptance tests are estimates), within [1e-10, 1e-3] — a loose
 * rtol must not turn "repeats within 100%" into a steady state.
 */
function steadyTolerance(model: Model): number {
  return Math.min(1e-3, Math.max(1e-10, 100 * model.solver.rtol));
}

/**
 * Each compartment's absolute floor (amount): the steady-state tolerance is 100·rtol relative,
 * and its absolute counterpart 100·atol — a cycle's integration error in a washed-out
 * compartment is a few atol — so a change is judged relative to the amount plus
 * 100·atol/tolerance, shrunk with the compartment's share of the largest volume: in a
 * compartment of negligible volume (an effect compartment) the amounts that matter are
 * smaller in proportion.
 */
function amountFloors(model: Model, nc: number): Float64Array {
  const tolerance = steadyTolerance(model);
  const largest = Math.max(1e-300, ...model.compartments.map((c) => c.volume ?? 0));
  return Float64Array.from(model.compartments.slice(0, nc), (c) => ((100 * model.solver.atol) / tolerance) * Math.min(1, (c.volume ?? largest) / largest));
}

function cycleMap(model: Model, system: CompartmentSystem, schedule: CycleMap['schedule'], stats: SolverStats, work: Work): CycleMap {
  const n = system.dimension;
  const nc = system.layout.compartments;
  const map: CycleMap = {
    schedule,
    rtol: model.solver.rtol,
    runs: 0,
    run(amounts) {
      const y = new Float64Array(n);
      y.set(amounts.subarray(0, nc));
      map.runs++;
      work.cycles++;
      work.integrations++;
      const run = solveSchedule(model, system, schedule, y, stats);
      // Only the end state is kept: the cycle's dense output goes back for the next cycle.
      releaseTrajectory(run.trajectory);
      return run.final;
    },
  };
  return map;
}

/** What a caller needs besides the cycle's figures: a population run skips the approach and the plotted cycle. */
export interface SteadyStateOptions {
  approach: boolean;
  profile: boolean;
  /** The propagators of a run of the same system just made (a virtual subject's), to share where the cycle's inputs are the same. */
  sharePropagators?: PropagatorCache;
  /** cycleStructure(model), when the caller has it already (another subject of the same doses and compartments). */
  structure?: CycleStructure | null;
  /** Whether to word `message` when the steady state is reached (a population reads only the figures); true when absent. */
  account?: boolean;
}

export function steadyStateFigures(
  model: Model,
  system: CompartmentSystem,
  stats: SolverStats,
  options: SteadyStateOptions = { approach: true, profile: true },
): SteadyStateFigures | null {
  const nc = system.layout.compartments;
  const structure = options.structure === undefined ? cycleStructure(model, nc) : options.structure;
  if (structure === null) return null;
  const { lines, period, trapped } = structure;
  const lineIndices = lines.map((l) => l.line);
  const method = model.linear ? 'closed-form' : 'iterated';
  // The search is solved with the model's own method, and its own statistics (not the main run's).
  const cycleStats: SolverStats = { ...stats };
  const work: Work = { cycles: 0, integrations: 0 };
  const spent = (): SteadyStateWork => ({ ...work, steps: cycleStats.acceptedSteps - stats.acceptedSteps });
  const notReached = (p: number, message: string, cycles = 0): SteadyStateFigures => ({
    period: p,
    lines: lineIndices,
    reached: false,
    message,
    method,
    cycles,
    residual: NaN,
    compartments: [],
    approachDefinition: APPROACH_DEFINITION,
    work: spent(),
    profile: null,
  });
  if (period === null) {
    return notReached(NaN, 'no steady state computed: the dosing intervals of the repeating lines have no common period');
  }
  if (trapped.length > 0) {
    const names = trapped.map((c) => `'${model.compartments[c].id}'`).join(', ');
    return notReached(
      period,
      `no steady state: ${names} ${trapped.length > 1 ? 'receive' : 'receives'} drug but ${trapped.length > 1 ? 'have' : 'has'} no way out of the body, directly or through other compartments, so drug accumulates without limit`,
    );
  }
  if (!structure.cycle) throw new Error('internal error: a cycle structure with a period and nothing trapped has no cycle');
  const { administrations: cycle, schedule, reached } = structure.cycle;
  const capacity = capacityProblem(model, cycle, period);
  if (capacity) return notReached(period, capacity);

  const floor = amountFloors(model, nc);
  let periodic: Float64Array;
  let how: string;
  let cycles: number;
  let searchResidual = 0;
  // The cycle's propagators, made once for the closed form and the cycle's figures.
  const cycleCache = model.linear ? new PropagatorCache(system.linearMatrix, system.dimension, scheduleInputs(schedule, system.dimension), undefined, options.sharePropagators) : undefined;
  if (model.linear) {
    // The cycle map is affine whatever integrates the curves: its fixed point in closed form.
    work.cycles++;
    work.integrations++;
    const first = propagateExact(system, schedule, new Float64Array(system.dimension), cycleCache).final;
    const state = linearPeriodicState(system, period, first, reached);
    if (!state) return notReached(period, 'no steady state computed: I − e^{Mτ} is singular to working precision over the compartments the doses reach', 1);
    periodic = state;
    cycles = 1;
    how = 'found in closed form from the cycle propagator';
  } else {
    const found = saturableSearch(model, system, schedule, cycle, period, floor, cycleStats, work);
    cycles = found.cycles;
    if (!found.found.ok) return notReached(period, found.found.message, cycles);
    periodic = found.found.state;
    searchResidual = found.found.residual;
    how = `found by iterating dosing cycles (${cycles} cycles simulated${found.tightened === null ? '' : `, the last at rtol ${formatNumber(found.tightened)}: near the fixed point one cycle takes away so little of a departure that its integration error had to be cut`}) until the state repeated to a relative ${formatNumber(searchResidual)}`;
  }

  const cycleModel: Model = { ...model, administrations: cycle, start: 0, end: period };
  const y0 = new Float64Array(system.dimension);
  y0.set(periodic);
  work.cycles++;
  work.integrations++;
  cycles++;
  const run = solveSchedule(cycleModel, system, schedule, y0, cycleStats, cycleCache);
  const figures = exposureFigures(cycleModel, system.layout, new CurveProbe(run.trajectory, system, schedule));
  const tracked = figures.map((f) => model.compartments.findIndex((c) => c.id === f.compartment));
  // How well the cycle as integrated (the figures' cycle) returns to the state it started from.
  let returned = 0;
  for (let i = 0; i < nc; i++) returned = Math.max(returned, Math.abs(run.final[i] - periodic[i]) / (Math.abs(periodic[i]) + floor[i]));
  const residual = Math.max(searchResidual, returned, Number.EPSILON);
  if (model.linear && run.methodsUsed.some((m) => m !== 'exact')) {
    how += `; the cycle integrated by ${run.methodsUsed.join(' and ')} from it returns to it within a relative ${formatNumber(returned)}`;
  }

  const approach: Approach[] = !options.approach
    ? tracked.map(() => ({ firstAuc: NaN, time90: null, time95: null }))
    : model.linear
    ? linearApproach(
        system,
        givenAdministrations(lines, period, 0, 1),
        period,
        tracked,
        tracked.map((c) => model.compartments[c].volume ?? NaN),
        reached,
        work,
      )
    : iteratedApproach(model, system, lines, period, figures.map((f) => f.overall.auc), tracked, cycleStats, work);
  const compartments = figures.map((f, k): SteadyStateCompartment => {
    const auc = f.overall.auc;
    const cavg = auc / period;
    const a = approach[k];
    return {
      compartment: f.compartment,
      cmax: f.overall.cmax,
      tmax: f.overall.tmax,
      cmin: f.overall.cmin,
      tmin: f.overall.tmin,
      trough: f.overall.cEnd,
      auc,
      cavg,
      fluctuation: cavg > 0 ? (f.overall.cmax - f.overall.cmin) / cavg : null,
      accumulationRatio: a.firstAuc > 0 ? auc / a.firstAuc : null,
      timeTo90: a.time90,
      timeTo95: a.time95,
      cyclesTo90: cycleOf(a.time90, period),
      cyclesTo95: cycleOf(a.time95, period),
      windows: f.overall.windows,
    };
  });
  const profile = options.profile ? cycleProfile(cycleModel, run.trajectory, schedule, y0) : null;
  releaseTrajectory(run.trajectory);
  return {
    period,
    lines: lineIndices,
    reached: true,
    message: options.account === false ? '' : reachedMessage(model, lines, period, how),
    method,
    cycles,
    residual,
    compartments,
    approachDefinition: APPROACH_DEFINITION,
    work: spent(),
    profile,
  };
}


function reachedMessage(model: Model, lines: DoseLines, period: number, how: string): string {
  const labels: (string | null)[] = [];
  for (const l of model.doseLines) labels[l.line] = l.label;
  const regimen = lines.map((l) => doseLineName(l.line, labels)).join(' and ');
  return `steady state of ${regimen} over a dosing cycle of ${formatNumber(period)} ${model.units.time}, ${how}`;
}

/** The cycle (1-based) in which time t falls; a time on a cycle's end belongs to that cycle. */
function cycleOf(t: number | null, period: number): number | null {
  return t === null ? null : Math.max(1, Math.ceil(t / period - 1e-12));
}

/**
 * A saturable model's fixed point: cycles from empty at the model's tolerance; near
 * saturation the integration error of a cycle moves the fixed point far, so the cycles are
 * solved again, from the state found, at a tolerance that brings that drift within the user's.
 */
function saturableSearch(
  model: Model,
  system: CompartmentSystem,
  schedule: CycleMap['schedule'],
  cycle: Model['administrations'],
  period: number,
  floor: Float64Array,
  stats: SolverStats,
  work: Work,
): { found: Found; cycles: number; tightened: number | null } {
  const nc = system.layout.compartments;
  const dosePerCycle = cycle.reduce((sum, a) => sum + a.amount, 0);
  const settings: SearchSettings = {
    tolerance: steadyTolerance(model),
    floor,
    eliminatedIndex: system.layout.eliminated,
    dosePerCycle,
    amountUnit: model.units.amount,
    account: capacityAccount(model, cycle, period),
  };
  const tighterModel = (rtol: number): Model => ({ ...model, solver: { ...model.solver, rtol, atol: (model.solver.atol * rtol) / model.solver.rtol } });
  const tightMap = (rtol: number) => cycleMap(tighterModel(Math.max(rtol / 100, TIGHTEST_RTOL / 10)), system, schedule, stats, work);
  const map = cycleMap(model, system, schedule, stats, work);
  const first = map.run(new Float64Array(nc));
  const tight = tightMap(model.solver.rtol);
  let found = iterate(settings, map, tight, first);
  let cycles = map.runs + tight.runs;
  let tightened: number | null = null;
  for (let attempt = 0; attempt < 2 && !found.ok && found.illConditioned; attempt++) {
    const current = tightened ?? model.solver.rtol;
    const rtol = Math.min(current / 10, current * found.illConditioned.rtolFactor);
    if (!(rtol >= TIGHTEST_RTOL)) {
      found = { ok: false, message: `${found.message}; resolving it would take rtol ${formatNumber(rtol)}, below ${formatNumber(TIGHTEST_RTOL)}, the tightest the search uses` };
      break;
    }
    const retry = cycleMap(tighterModel(rtol), system, schedule, stats, work);
    const retryTight = tightMap(rtol);
    found = iterate(settings, retry, retryTight, found.illConditioned.state, true);
    cycles += retry.runs + retryTight.runs;
    tightened = rtol;
  }
  return { found, cycles, tightened };
}
