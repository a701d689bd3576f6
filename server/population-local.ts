/**
 * What the calling thread of a population computes itself — chunks of subjects and a share of
 * the bands — and what a worker thread computes for its share. It imports the engine, so the
 * command line's own thread loads it (by import()) only when it is given a plan to compute with.
 */
import { bandValues, type GridPart, type PopulationPlan } from '../models/population/population.ts';

export { joinBandRanges, runBatch } from '../models/population/population.ts';

/** A thread's share of the bands: concentrations, and simulated observations when the plan has a residual error. */
export interface BandRange {
  from: number;
  to: number;
  values: Float64Array;
  observations: Float64Array | null;
}

/** bandValues over [from, to) for concentrations and, with a residual error, simulated observations. */
export function bandRange(plan: PopulationPlan, parts: readonly GridPart[], from: number, to: number): BandRange {
  return { from, to, values: bandValues(plan, parts, null, from, to), observations: plan.residual ? bandValues(plan, parts, plan.residual, from, to) : null };
}
