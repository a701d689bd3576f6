/**
 * Invented compounds and levels for the fitting tests: scenarios built in code, levels made
 * from known ("true") parameters by the engine (or by the closed form, where a test says so).
 */
import { simulate } from '../../models/simulate.ts';
import type { ScenarioInput } from '../../models/scenario/schema.ts';
import { SubjectRandom } from '../../models/population/random.ts';

export type Levels = { time: number; concentration: number }[];

/** One-compartment oral: a single 400 mg dose into the gut, ka, CL and V given as written quantities. */
export function oneCompartmentOral(q: { ka: unknown; cl: unknown; v: unknown }, levels: Levels, fit?: unknown, extra: Partial<ScenarioInput> = {}): ScenarioInput {
  return {
    title: 'Invented oral drug, one compartment',
    units: { amount: 'mg', volume: 'L', time: 'h' },
    compartments: [{ id: 'gut' }, { id: 'central', volume: q.v as string }],
    transfers: [
      { from: 'gut', to: 'central', k: q.ka as string },
      { from: 'central', cl: q.cl as string },
    ],
    doses: [{ into: 'gut', amount: '400 mg', at: 0 }],
    output: { end: '36 h', step: '0.5 h' },
    observations: levels.map((l) => ({ time: l.time, compartment: 'central', concentration: l.concentration })),
    ...(fit ? { fit } : {}),
    ...extra,
  } as ScenarioInput;
}

/** Two-compartment oral over 10 days, 200 mg every 12 h: ka, CL, V1, Q (intercompartmental clearance), V2. */
export function twoCompartmentOral(q: { ka: unknown; cl: unknown; v1: unknown; q: unknown; v2: unknown }, levels: Levels, fit?: unknown, extra: Partial<ScenarioInput> = {}): ScenarioInput {
  return {
    title: 'Invented oral drug, two compartments',
    units: { amount: 'mg', volume: 'L', time: 'h' },
    compartments: [{ id: 'gut' }, { id: 'central', volume: q.v1 as string }, { id: 'tissue', volume: q.v2 as string }],
    transfers: [
      { from: 'gut', to: 'central', k: q.ka as string },
      { from: 'central', cl: q.cl as string },
      { from: 'central', to: 'tissue', cl: q.q as string },
      { from: 'tissue', to: 'central', cl: q.q as string },
    ],
    doses: [{ into: 'gut', amount: '200 mg', at: 0, every: '12 h', through: '228 h' }],
    output: { end: '240 h', step: '1 h' },
    observations: levels.map((l) => ({ time: l.time, compartment: 'central', concentration: l.concentration })),
    ...(fit ? { fit } : {}),
    ...extra,
  } as ScenarioInput;
}

/** The engine's concentrations at `times` for a scenario (its observations replaced by placeholders). */
export function engineLevels(scenario: ScenarioInput, times: number[]): Levels {
  const probe = { ...scenario, observations: times.map((t) => ({ time: t, compartment: 'central', concentration: 1 })), fit: undefined };
  const r = simulate(probe);
  if (!r.ok) throw new Error(JSON.stringify(r.problems));
  return r.value.observations.map((o) => ({ time: o.time, concentration: o.predicted }));
}

/** Multiplies each level by exp(cv·z) (a proportional error), z standard normal from Philox with a fixed seed. */
export function withNoise(levels: Levels, cv: number, seed: number): Levels {
  const random = new SubjectRandom(seed, 0);
  return levels.map((l, i) => ({ time: l.time, concentration: l.concentration * Math.exp(cv * random.normal(0, i)) }));
}

/** C(t) = F·D·ka / (V·(ka − k)) · (e^(−kt) − e^(−ka·t)), k = CL/V (Gibaldi & Perrier eq. 1.61). */
export function oralClosedForm(dose: number, ka: number, cl: number, v: number, t: number): number {
  const k = cl / v;
  return ((dose * ka) / (v * (ka - k))) * (Math.exp(-k * t) - Math.exp(-ka * t));
}
