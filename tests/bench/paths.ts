/**
 * The timed units of work: solve the dose schedule and fill the output grid, by the
 * engine (exact or adaptive path, via solveSchedule + trajectory.sample) and by odex
 * driven over the same breakpoints with a hand-written right-hand side.
 */
import { createRequire } from 'node:module';
import { scheduleOf, type Schedule } from '../../models/building/events.ts';
import type { Model } from '../../models/building/model.ts';
import { normaliseScenario } from '../../models/scenario/normalize.ts';
import type { Trajectory } from '../../models/solving/numerics/dense-store.ts';
import { emptyStats, type SolverStats } from '../../models/solving/numerics/ode-system.ts';
import { outputRows, solveSchedule } from '../../models/simulate.ts';
import { CompartmentSystem } from '../../models/building/system.ts';
import { rates, halvexin } from './scenario.ts';

export interface Rows {
  times: Float64Array;
  sides: Uint8Array;
}

/** What a run leaves on the output grid: the amounts of the three compartments and the central concentration. */
export class GridSeries {
  readonly gut: Float64Array;
  readonly central: Float64Array;
  readonly peripheral: Float64Array;
  readonly concentration: Float64Array;
  readonly write: (row: number, state: ArrayLike<number>) => void;

  constructor(rows: number) {
    // One allocation for the four columns (the same for every path timed).
    const all = new Float64Array(4 * rows);
    const gut = (this.gut = all.subarray(0, rows));
    const central = (this.central = all.subarray(rows, 2 * rows));
    const peripheral = (this.peripheral = all.subarray(2 * rows, 3 * rows));
    const concentration = (this.concentration = all.subarray(3 * rows, 4 * rows));
    const invV1 = 1 / halvexin.v1;
    this.write = (row, state) => {
      gut[row] = state[0];
      central[row] = state[1];
      peripheral[row] = state[2];
      concentration[row] = state[1] * invV1;
    };
  }
}

/** A scenario read once: the model, its ODE system, schedule and output rows. */
export interface Prepared {
  model: Model;
  system: CompartmentSystem;
  schedule: Schedule;
  rows: Rows;
}

/** The normalised model; with forceAdaptive, marked non-linear so that 'auto' takes the adaptive path. */
export function readModel(scenario: unknown, forceAdaptive = false): Model {
  const model = normaliseScenario(scenario);
  if (!model.ok) throw new Error(`scenario rejected: ${JSON.stringify(model.problems)}`);
  return forceAdaptive ? { ...model.value, linear: false } : model.value;
}

/**
 * Reads a scenario once. forceAdaptive: on a linear model, method 'auto' takes the exact
 * path (choosePath); marking the model non-linear makes solveSchedule run the adaptive
 * 'auto' integrator (DOP853 at rtol ≤ 1e-8, else DOPRI5, stiffness monitor on) instead.
 */
export function prepare(scenario: unknown, forceAdaptive = false): Prepared {
  const model = readModel(scenario, forceAdaptive);
  const system = new CompartmentSystem(model);
  const schedule = scheduleOf(model);
  return { model, system, schedule, rows: outputRows(model.outputTimes, schedule) };
}

export interface EngineRun {
  grid: GridSeries;
  stats: SolverStats;
  methodsUsed: string[];
  propagators: number;
  trajectory: Trajectory;
}

/**
 * One engine run: solveSchedule from the empty state, then the trajectory sampled on the
 * output rows, into `grid` (the timed jobs pass one made beforehand, as for odex, so that
 * no path is timed allocating its output).
 */
export function runEngine(p: Prepared, grid = new GridSeries(p.rows.times.length)): EngineRun {
  const stats = emptyStats();
  const solution = solveSchedule(p.model, p.system, p.schedule, new Float64Array(p.system.dimension), stats);
  solution.trajectory.sample(p.rows.times, p.rows.sides, grid.write);
  return { grid, stats, methodsUsed: solution.methodsUsed, propagators: solution.propagators, trajectory: solution.trajectory };
}

// ---------------------------------------------------------------------------------------
// odex (Hairer & Wanner's GBS extrapolation code ODEX, JavaScript port by C. Smith).
//
// Loaded with require('odex/src/odex.js') — the package's own entry file — rather than
// `import { Solver } from 'odex'`: tsconfig maps the bare name 'odex' to the type stub
// tests/types/odex.d.ts (the package's TypeScript source fails strict checking), and tsx
// honours that mapping at run time too, so the bare import would load the empty stub.
// The few members used here are typed locally from node_modules/odex/src/odex.ts.
// ---------------------------------------------------------------------------------------

type OdexDerivative = (x: number, y: number[]) => number[];
type OdexDense = (component: number, x: number) => number;
type OdexOutput = (nr: number, xOld: number, x: number, y: number[], dense?: OdexDense) => boolean | void;

interface OdexSolver {
  denseOutput: boolean;
  absoluteTolerance: number | number[];
  relativeTolerance: number | number[];
  initialStepSize: number;
  maxSteps: number;
  solve(
    f: OdexDerivative,
    x: number,
    y0: number[],
    xEnd: number,
    solOut?: OdexOutput,
  ): { y: number[]; outcome: number; nStep: number; xEnd: number; nAccept: number; nReject: number; nEval: number };
}

interface OdexModule {
  Solver: new (n: number) => OdexSolver;
  Outcome: { Converged: number };
}

const require = createRequire(import.meta.url);
const odex = require('odex/src/odex.js') as OdexModule;

export interface OdexRun {
  grid: GridSeries;
  /** Calls of the right-hand side (counted in the wrapper). */
  evaluations: number;
  accepted: number;
  rejected: number;
}

/** Each segment's first trial step: odex's default (1e-4) or a given value (h). */
export type OdexStart = number | 'default';

/** State size of the odex system: 3 amounts, 2 AUCs, the eliminated amount (as the engine's state). */
const N = 6;

/**
 * odex over the engine's breakpoint schedule: at each breakpoint the boluses are added to
 * the amounts and the infusion rates are set; odex then integrates to the next breakpoint
 * and its dense output fills the output rows inside the segment. The right-hand side is
 * the engine's state equation written out by hand: amounts, the AUC of central and
 * peripheral, the amount eliminated (so both solvers control the error of the same
 * six components with the same scalar rtol and atol).
 */
export function runOdex(
  schedule: Schedule,
  rows: Rows,
  rtol: number,
  atol: number,
  start: OdexStart = 'default',
  grid = new GridSeries(rows.times.length),
): OdexRun {
  const { ka, k10, k12, k21 } = rates;
  const k1 = k10 + k12;
  const invV1 = 1 / halvexin.v1;
  const invV2 = 1 / halvexin.v2;
  let u0 = 0;
  let u1 = 0;
  let u2 = 0;
  let evaluations = 0;
  const f: OdexDerivative = (_t, y) => {
    evaluations++;
    const a0 = y[0];
    const a1 = y[1];
    const a2 = y[2];
    return [u0 - ka * a0, u1 + ka * a0 - k1 * a1 + k21 * a2, u2 + k12 * a1 - k21 * a2, a1 * invV1, a2 * invV2, k10 * a1];
  };

  const solver = new odex.Solver(N);
  solver.denseOutput = true;
  solver.relativeTolerance = rtol;
  solver.absoluteTolerance = atol;
  solver.maxSteps = 1_000_000;

  const times = rows.times;
  const sides = rows.sides;
  const total = times.length;
  const state = new Float64Array(N);
  let y: number[] = new Array<number>(N).fill(0);
  let r = 0;
  // Rows before the first breakpoint's boluses (the left limit at the start).
  const bps = schedule.breakpoints;
  while (r < total && times[r] === schedule.start && sides[r] === 0) grid.write(r++, y);

  let accepted = 0;
  let rejected = 0;
  for (let k = 0; k < bps.length; k++) {
    const bp = bps[k];
    for (const j of bp.jumps) y[j.compartment] += j.amount;
    u0 = bp.rates[0];
    u1 = bp.rates[1];
    u2 = bp.rates[2];
    const t0 = bp.time;
    const t1 = k + 1 < bps.length ? bps[k + 1].time : schedule.end;
    const lastSegment = k + 1 === bps.length;
    // Right limits at the breakpoint itself.
    while (r < total && times[r] === t0 && sides[r] === 1 && (t0 < t1 || lastSegment)) grid.write(r++, y);
    if (!(t1 > t0)) continue;

    if (start !== 'default') solver.initialStepSize = start;
    const result = solver.solve(f, t0, y, t1, (nr, xOld, x, _y, dense) => {
      if (nr === 1 || dense === undefined) return;
      while (r < total && times[r] < x) {
        const t = times[r];
        for (let c = 0; c < N; c++) state[c] = dense(c, t);
        grid.write(r++, state);
      }
    });
    if (result.outcome !== odex.Outcome.Converged) throw new Error(`odex stopped at segment ${k} (outcome ${result.outcome})`);
    accepted += result.nAccept;
    rejected += result.nReject;
    y = result.y;
    // Left limits at the next breakpoint (and the final time on the last segment).
    while (r < total && (times[r] < t1 || (times[r] === t1 && (sides[r] === 0 || lastSegment)))) grid.write(r++, y);
  }
  if (r !== total) throw new Error(`odex driver filled ${r} of ${total} rows`);
  return { grid, evaluations, accepted, rejected };
}
