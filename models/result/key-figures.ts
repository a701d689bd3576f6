/**
 * The few figures kept with a stored run, so that a list of runs can be read without its
 * full result: per compartment with a volume, Cmax, Tmax, Cmin and AUC over the span; the
 * units; the solution path and methods; the steps; and the mass-balance error.
 */
import type { SimulationResultJson } from './result-format.ts';

export interface KeyFigures {
  units: { concentration: string; time: string; auc: string };
  compartments: Record<string, { cmax: number; tmax: number; cmin: number; auc: number }>;
  path: string;
  methods: string[];
  acceptedSteps: number;
  rejectedSteps: number;
  massBalanceError: number;
}

export function keyFiguresOf(result: SimulationResultJson): KeyFigures {
  const compartments: KeyFigures['compartments'] = {};
  for (const [id, figures] of Object.entries(result.metrics.compartments)) {
    if (result.compartments[id]?.concentration === null) continue;
    const o = figures.overall;
    compartments[id] = { cmax: o.cmax, tmax: o.tmax, cmin: o.cmin, auc: o.auc };
  }
  const d = result.diagnostics;
  return {
    units: { concentration: result.units.concentration, time: result.units.time, auc: result.units.auc },
    compartments,
    path: d.path,
    methods: d.methodsUsed,
    acceptedSteps: d.acceptedSteps,
    rejectedSteps: d.rejectedSteps,
    massBalanceError: d.massBalance.relativeError,
  };
}
