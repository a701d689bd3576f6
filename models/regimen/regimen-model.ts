/**
 * One proposed regimen as a Model: the kept dose line's route, bioavailability and lag with the
 * proposed amount, interval and duration, given from empty at time 0 (every other dose line of
 * the scenario left out: a proposal is a regimen of its own), optionally after a loading dose.
 */
import type { Administration, DoseLineSummary, Model, ModelThreshold } from '../building/model.ts';
import { administrationsWithin } from '../figures/steady-state/cycle.ts';

export interface RegimenSpec {
  amount: number;
  interval: number;
  duration: number;
}

/** The maintenance line as the steady-state search reads it: repeating, running at the end of the span. */
export function maintenanceLine(line: DoseLineSummary, r: RegimenSpec): DoseLineSummary {
  return { ...line, nominal: r.amount, duration: r.duration, firstGiven: 0, every: r.interval, count: 1, beyondEnd: 0, nextGiven: null };
}

/** The model whose steady state is the regimen's: one cycle [0, τ) of the maintenance line. */
export function steadyModel(base: Model, line: DoseLineSummary, r: RegimenSpec, thresholds: ModelThreshold[]): Model {
  const l = maintenanceLine(line, r);
  const administrations = doses(line, r, null, 1);
  return { ...base, doseLines: [l], administrations, start: 0, end: r.interval, outputTimes: Float64Array.of(0, r.interval), thresholds, observations: [] };
}

/**
 * The first `count` doses from empty: dose k given at kτ, the first the loading amount when one
 * is given (so the maintenance starts one interval after it, in its place).
 */
function doses(line: DoseLineSummary, r: RegimenSpec, loading: number | null, count: number): Administration[] {
  const out: Administration[] = [];
  for (let k = 0; k < count; k++) {
    const nominal = k === 0 && loading !== null ? loading : r.amount;
    const given = k * r.interval;
    out.push({ line: line.line, occurrence: k, into: line.into, given, arrival: given + line.lag, nominal, amount: nominal * line.bioavailability, duration: r.duration });
  }
  return out;
}

/** Intervals [from, to) of the regimen from empty as a model of their own span (a chunk of the approach run). */
export function chunkModel(base: Model, line: DoseLineSummary, r: RegimenSpec, loading: number | null, from: number, to: number, thresholds: ModelThreshold[]): Model {
  const start = from * r.interval;
  const end = to * r.interval;
  const administrations = administrationsWithin(doses(line, r, loading, to), start, end);
  return { ...base, administrations, start, end, outputTimes: Float64Array.of(start, end), thresholds, observations: [] };
}
