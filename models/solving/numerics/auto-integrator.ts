/**
 * One segment (the interval between two discontinuities) with the chosen method, and
 * the automatic choice: an explicit pair with stiffness monitoring that hands over to
 * the Rosenbrock method for the rest of the segment once the step is stability-bound.
 */
import { DenseStore } from './dense-store';
import type { OdeSystem, SolverStats } from './ode-system';
import { ABM2_FORM, integrateAbm2 } from './adams-bashforth-moulton';
import { integrateAdaptive, integrateFixed, StiffnessMonitor } from './explicit-rk';
import { unpack } from './rk-step';
import { integrateRosenbrock } from './rosenbrock';
import type { ExplicitTableau } from './tableau';
import { DOP853, DOPRI5, EULER, HEUN, RK4 } from './tableaux';

export type MethodName = 'auto' | 'dopri5' | 'dop853' | 'rosenbrock' | 'euler' | 'heun' | 'rk4' | 'abm2';
export type ConcreteMethod = Exclude<MethodName, 'auto'>;
export type FixedStepMethod = 'euler' | 'heun' | 'rk4' | 'abm2';

const FIXED_TABLEAUX: Record<Exclude<FixedStepMethod, 'abm2'>, ExplicitTableau> = { euler: EULER, heun: HEUN, rk4: RK4 };

export function isFixedStep(method: MethodName): method is FixedStepMethod {
  return method === 'euler' || method === 'heun' || method === 'rk4' || method === 'abm2';
}

/** Coefficient vectors a fixed-step method stores per step (its interpolant between steps). */
export function fixedStepVectors(method: FixedStepMethod): number {
  return method === 'abm2' ? ABM2_FORM.vectors : unpack(FIXED_TABLEAUX[method]).form.vectors;
}

export interface SegmentSettings {
  method: MethodName;
  rtol: number;
  atol: number;
  /** Step attempts allowed per method run within one segment (fixed-step methods: steps, refused up front when exceeded). */
  maxSteps: number;
  /** Step size of the fixed-step methods (euler, heun, rk4, abm2). */
  step?: number;
  /** Upper bound on adaptive steps. */
  maxStep?: number;
}

/** Carried from one segment to the next by the driver. */
export interface IntegratorState {
  /** The step proposed after the first step of the last explicit segment: segments after repeated doses start alike. */
  explicitStep: number | null;
  /** Last step proposed by the Rosenbrock method. */
  stiffStep: number | null;
  /** Whether the previous segment ended in the stiff method. */
  stiff: boolean;
  /** Explicit→stiff hand-overs so far. */
  switches: number;
}

export function createIntegratorState(): IntegratorState {
  return { explicitStep: null, stiffStep: null, stiff: false, switches: 0 };
}

export interface SegmentResult {
  /** Methods used in this segment, in order. */
  methods: ConcreteMethod[];
}

/**
 * rtol at or below which 'auto' prefers the eighth-order pair: on the benchmark's year of
 * daily doses DOP853 needed about 25% less time than DOPRI5 at rtol 1e-6 and 40% less at 1e-7
 * (`npm run bench`); above it the fifth-order pair's cheaper steps win.
 */
export const HIGH_ORDER_RTOL = 1e-6;

function fixedStep(settings: SegmentSettings): number {
  const h = settings.step;
  if (h === undefined || !(h > 0) || !Number.isFinite(h)) {
    throw new RangeError(`method '${settings.method}' needs a positive fixed step`);
  }
  return h;
}

function hint(h: number | null): number | undefined {
  return h !== null && h > 0 && Number.isFinite(h) ? h : undefined;
}

/** Integrates y from t0 to t1 (y in: y(t0), out: y(t1)), recording every step in store. */
export function integrateSegment(
  system: OdeSystem,
  t0: number,
  t1: number,
  y: Float64Array,
  settings: SegmentSettings,
  store: DenseStore,
  stats: SolverStats,
  state: IntegratorState,
): SegmentResult {
  const { rtol, atol, maxSteps, maxStep } = settings;
  switch (settings.method) {
    case 'euler':
    case 'heun':
    case 'rk4': {
      integrateFixed(system, t0, t1, y, FIXED_TABLEAUX[settings.method], fixedStep(settings), store, stats, maxSteps);
      state.stiff = false;
      return { methods: [settings.method] };
    }
    case 'abm2':
      integrateAbm2(system, t0, t1, y, fixedStep(settings), store, stats, maxSteps);
      state.stiff = false;
      return { methods: ['abm2'] };
    case 'dopri5':
    case 'dop853': {
      const tab = settings.method === 'dopri5' ? DOPRI5 : DOP853;
      const opts = { rtol, atol, maxSteps, maxStep, initialStep: hint(state.explicitStep) };
      state.explicitStep = integrateAdaptive(system, t0, t1, y, tab, opts, store, stats).restartStep;
      state.stiff = false;
      return { methods: [settings.method] };
    }
    case 'rosenbrock': {
      const opts = { rtol, atol, maxSteps, maxStep, initialStep: hint(state.stiffStep) };
      state.stiffStep = integrateRosenbrock(system, t0, t1, y, opts, store, stats).lastStep;
      state.stiff = true;
      return { methods: ['rosenbrock'] };
    }
    case 'auto':
      return integrateAuto(system, t0, t1, y, settings, store, stats, state);
  }
}

/**
 * Every segment starts explicit again: a dose can make a previously stiff system
 * non-stiff (or the reverse), and the monitor costs only O(n) per step to find out.
 */
function integrateAuto(
  system: OdeSystem,
  t0: number,
  t1: number,
  y: Float64Array,
  settings: SegmentSettings,
  store: DenseStore,
  stats: SolverStats,
  state: IntegratorState,
): SegmentResult {
  const { rtol, atol, maxSteps, maxStep } = settings;
  const explicit = rtol <= HIGH_ORDER_RTOL ? DOP853 : DOPRI5;
  const name: ConcreteMethod = explicit === DOP853 ? 'dop853' : 'dopri5';
  const opts = { rtol, atol, maxSteps, maxStep, initialStep: hint(state.explicitStep) };
  const result = integrateAdaptive(system, t0, t1, y, explicit, opts, store, stats, new StiffnessMonitor());
  state.explicitStep = result.restartStep;
  if (result.stiffAt === null) {
    state.stiff = false;
    return { methods: [name] };
  }
  stats.stiffSwitches++;
  state.switches++;
  state.stiff = true;
  // The explicit step at hand-over is stability-bound, so it is a safe (small) start for the stiff method.
  const stiffStart = hint(state.stiffStep) ?? result.lastStep;
  const stiffOpts = { rtol, atol, maxSteps, maxStep, initialStep: Math.max(stiffStart, result.lastStep) };
  state.stiffStep = integrateRosenbrock(system, result.stiffAt, t1, y, stiffOpts, store, stats).lastStep;
  return { methods: [name, 'rosenbrock'] };
}
