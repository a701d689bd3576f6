/**
 * The normalised model: a validated scenario with every quantity a plain number in
 * the scenario's unit system, names resolved to indices and repeated doses expanded.
 * Everything downstream (system builder, solvers, metrics) reads only this.
 */
import type { SolverMethod } from '../scenario/schema.ts';
import type { Covariates } from '../subject/subject.ts';
import type { UnitSystem } from '../scenario/units.ts';
import type { Clock } from '../levels/clock.ts';
import type { Observation } from '../levels/observation.ts';

export interface ModelCompartment {
  id: string;
  label: string;
  /** Volume of distribution; null for an amount-only compartment (a depot). */
  volume: number | null;
}

export type Kinetics =
  | { kind: 'first-order'; k: number; clearance: number | null }
  | { kind: 'saturable'; vmax: number; km: number };

export interface ModelTransfer {
  from: number;
  /** Index of the receiving compartment, or null for elimination from the body. */
  to: number | null;
  kinetics: Kinetics;
  label: string | null;
}

/** One administration after expanding repeats: where, when and how much arrives. */
export interface Administration {
  /** Index of the dose line in the scenario (doses[line]). */
  line: number;
  /** Occurrence within its line, 0-based. */
  occurrence: number;
  into: number;
  /** When it is given (the dosing clock). */
  given: number;
  /** When it starts to arrive: given + lag. */
  arrival: number;
  /** Nominal amount per dose (before bioavailability). */
  nominal: number;
  /** Amount that arrives: nominal × bioavailability. */
  amount: number;
  /** Infusion duration; 0 for a bolus. */
  duration: number;
}

/** A dose line as the user wrote it, in numbers: for regimen tables and the steady-state cycle. */
export interface DoseLineSummary {
  line: number;
  label: string | null;
  into: number;
  nominal: number;
  bioavailability: number;
  lag: number;
  duration: number;
  firstGiven: number;
  /** Dosing interval, or null for a single dose. */
  every: number | null;
  /** Doses in the line within the simulated span. */
  count: number;
  /** Doses the line asks for (by count, or a single dose) that arrive at or after the end and are left out. */
  beyondEnd: number;
  /** When the first dose left out because the span ended was to be given; null if the line ended within the span. */
  nextGiven: number | null;
}

export interface ModelThreshold {
  compartment: number;
  above: number | null;
  below: number | null;
  /** Index in output.thresholds, for error paths and labels. */
  index: number;
}

export interface SolverSettings {
  method: SolverMethod;
  rtol: number;
  atol: number;
  /** Fixed step of euler, heun, rk4 and abm2. */
  step: number | null;
  maxSteps: number;
}

export interface Model {
  title: string;
  units: UnitSystem;
  compartments: ModelCompartment[];
  transfers: ModelTransfer[];
  administrations: Administration[];
  doseLines: DoseLineSummary[];
  start: number;
  end: number;
  /** Requested output times, ascending and unique, within [start, end]. */
  outputTimes: Float64Array;
  thresholds: ModelThreshold[];
  solver: SolverSettings;
  /** True when no transfer is saturable: the exact matrix-exponential path applies. */
  linear: boolean;
  /** The subject's covariates and the quantities they changed; null when the scenario describes no subject. */
  subject: { covariates: Covariates; adjustments: Adjustment[] } | null;
  /** Where elapsed time 0 sits on the calendar; null when the scenario writes no date-time. */
  clock: Clock | null;
  /** Measured levels, ascending as written; times in the scenario's time unit. */
  observations: Observation[];
}

/** A model quantity that covariate relations changed for this subject, for tables and reports. */
export interface Adjustment {
  /** JSON path of the quantity, e.g. "transfers[1].cl". */
  path: string;
  /** The quantity's own name, when the scenario gives one. */
  name: string | null;
  typical: number;
  value: number;
  /** The relations in words, each a multiplier, e.g. ["× (weight / 70 kg)^0.75"]. */
  relations: string[];
}

