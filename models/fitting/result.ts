/** What a fit returns (the JSON the command line prints with --format json). */
import type { Objective, Weighting } from './settings.ts';
import type { StopReason } from './levenberg-marquardt.ts';

/**
 * A correlation of two estimates beyond ±this is flagged wherever the correlations are shown
 * (page, report): the levels tell the two apart poorly (common practice; no single source).
 */
export const STRONG_CORRELATION = 0.95;

export interface FitEstimate {
  /** The subject's value, in `unit` (covariate relations applied). */
  value: number;
  /** From the curvature at the optimum, taken to the natural scale by the delta method; null when the curvature is singular or wls has no degree of freedom left. */
  standardError: number | null;
  /** standardError / value. */
  relativeStandardError: number | null;
  unit: string;
  /** The value the fit started from: the typical value with the subject's covariate relations. */
  typical: number;
  /** The box the optimiser kept to, in `unit`. */
  bounds: [number, number];
  /** JSON path of the quantity in the scenario. */
  path: string;
}

export interface FitPrediction {
  path: string;
  time: number;
  compartment: string;
  label: string | null;
  observed: number | null;
  predicted: number;
  /** observed − predicted; null for a level below the limit (left out of the fit). */
  residual: number | null;
  /** The residual as the objective weighs it: √w·(observed − predicted) (wls) or (observed − predicted)/SD (map). */
  weightedResidual: number | null;
  /** False for a level left out (below the limit under "exclude", no value). */
  used: boolean;
  /** Below the limit and counted as censored (the probability of a level below `limit`). */
  censored: boolean;
  limit: number | null;
}

export interface FitCurve {
  compartment: string;
  times: number[];
  predicted: number[];
  /** 5th and 95th percentiles over parameter sets drawn from the estimates' uncertainty; null when it cannot be drawn. */
  lower: number[] | null;
  upper: number[] | null;
}

export interface FitResult {
  settings: { objective: Objective; weighting: Weighting; estimate: string[] };
  estimates: Record<string, FitEstimate>;
  /** Correlations of the estimates (in `estimates` order); null when the curvature is singular. */
  correlation: { names: string[]; matrix: number[][] } | null;
  /** The sum of squares minimised (map: the weighted residuals' squares plus the prior's). */
  objective: number;
  converged: boolean;
  iterations: number;
  /** Model evaluations, the difference quotients' included. */
  evaluations: number;
  stopReason: StopReason;
  gradientNorm: number;
  /** Convergence and identifiability in plain words. */
  message: string;
  /** What the data cannot identify, one line each (empty when all is well). */
  identifiability: string[];
  /** Condition number of JᵀWJ at the optimum. */
  conditionNumber: number;
  predictions: FitPrediction[];
  curves: FitCurve[];
  units: { time: string; concentration: string };
  /** The scenario with the estimates written in as the quantities' typical values. */
  fittedScenario: unknown;
  notes: string[];
}
