/**
 * Fitting figures for `npm run bench` (alone: `npm run bench:fit`): a MAP fit of a
 * two-compartment oral model (invented compound) to 6 levels over 10 days, four quantities
 * (ka, CL, V1, V2, each with a cv; Q fixed), target < 200 ms; the same with saturable
 * elimination (Vmax, Km, V1, V2), target < 1 s. Both without the 90% band (200 more
 * simulations, timed beside them for context). Each beside a reference measured in the same
 * run, as a ratio: one simulate() of the same model (steady state and figures included, so
 * heavier than one of the fit's evaluations, which builds, solves and reads six predictions
 * only: the fit's time per evaluation is printed beside it).
 */
import { fitScenario } from '../../models/fitting/fit.ts';
import type { ScenarioInput } from '../../models/scenario/schema.ts';
import { simulate } from '../../models/simulate.ts';
import { timeIt, type Timing } from './timing.ts';

export const fitTargets = { linearMs: 200, saturableMs: 1000 } as const;

const times = [2, 11.5, 47.5, 98, 190, 239.5];

function scenario(saturable: boolean, levels: number[] | null, values: { ka: number; cl: number; v1: number; v2: number; vmax: number; km: number }, withCv: boolean): ScenarioInput {
  const q = (typical: string, cv: string, name: string) => (withCv ? { typical, cv, name } : typical);
  return {
    title: saturable ? 'Invented oral drug, two compartments, saturable elimination' : 'Invented oral drug, two compartments',
    compartments: [{ id: 'gut' }, { id: 'central', volume: q(`${values.v1} L`, '25%', 'V1') }, { id: 'tissue', volume: q(`${values.v2} L`, '35%', 'V2') }],
    transfers: [
      { from: 'gut', to: 'central', k: q(`${values.ka} 1/h`, '40%', 'ka') },
      saturable ? { from: 'central', vmax: q(`${values.vmax} mg/h`, '30%', 'Vmax'), km: q(`${values.km} mg/L`, '40%', 'Km') } : { from: 'central', cl: q(`${values.cl} L/h`, '30%', 'CL') },
      { from: 'central', to: 'tissue', cl: '8 L/h' },
      { from: 'tissue', to: 'central', cl: '8 L/h' },
    ],
    doses: [{ into: 'gut', amount: '200 mg', at: 0, every: '12 h', through: '228 h' }],
    output: { end: '240 h', step: '1 h' },
    observations: times.map((t, i) => ({ time: t, compartment: 'central', concentration: levels ? levels[i] : 1 })),
    population: { subjects: 100, correlations: [{ between: [saturable ? 'Vmax' : 'CL', 'V1'], value: 0.3 }], residual: { additive: '0.05 mg/L', proportional: '15%' } },
    fit: { estimate: saturable ? ['Vmax', 'Km', 'V1', 'V2'] : ['ka', 'CL', 'V1', 'V2'], objective: 'map' },
  } as ScenarioInput;
}

const typical = { ka: 1.1, cl: 5, v1: 30, v2: 90, vmax: 40, km: 4 };
const patient = { ka: 0.8, cl: 6.5, v1: 36, v2: 70, vmax: 32, km: 5.5 };
// A fixed ±10% pattern in place of noise, so the figures are the same on every run.
const wobble = [1.08, 0.93, 1.05, 0.9, 1.1, 0.97];

function patientScenario(saturable: boolean): ScenarioInput {
  const r = simulate(scenario(saturable, null, patient, false));
  if (!r.ok) throw new Error(JSON.stringify(r.problems));
  return scenario(saturable, r.value.observations.map((o, i) => o.predicted * wobble[i]), typical, true);
}

export interface FitCase {
  fit: Timing;
  withBand: Timing;
  evaluation: Timing;
  ratio: number;
  iterations: number;
  evaluations: number;
  converged: boolean;
  estimates: Record<string, number>;
  pass: boolean;
}

export interface FitBench {
  linear: FitCase;
  saturable: FitCase;
}

function measureCase(saturable: boolean): FitCase {
  const s = patientScenario(saturable);
  const fit = timeIt(() => fitScenario(s, { band: false }), { minReps: 5, maxReps: 15, budgetMs: 4000 });
  if (!fit.value.ok) throw new Error(JSON.stringify(fit.value.problems));
  const withBand = timeIt(() => fitScenario(s), { warmups: 1, warmupMs: 0, minReps: 3, maxReps: 5, budgetMs: 4000 });
  // The reference: simulate() of the same scenario at one output time (its figures and steady state included).
  const one = { ...s, population: undefined, fit: undefined, output: { end: '240 h', times: [240] } };
  const evaluation = timeIt(() => simulate(one), { minReps: 20, maxReps: 200, budgetMs: 1000 });
  const r = fit.value.value;
  const target = saturable ? fitTargets.saturableMs : fitTargets.linearMs;
  return {
    fit: fit.timing, withBand: withBand.timing, evaluation: evaluation.timing, ratio: fit.timing.median / evaluation.timing.median,
    iterations: r.iterations, evaluations: r.evaluations, converged: r.converged,
    estimates: Object.fromEntries(Object.entries(r.estimates).map(([k, e]) => [k, e.value])),
    pass: fit.timing.median < target,
  };
}

export function measureFit(): FitBench {
  return { linear: measureCase(false), saturable: measureCase(true) };
}

function line(name: string, c: FitCase, target: number): string {
  return `${name}: ${c.fit.median.toFixed(1)} ms (target < ${target} ms, ${c.pass ? 'PASS' : 'FAIL'}); ${c.iterations} iterations, ${c.evaluations} model evaluations, ` +
    `${c.converged ? 'converged' : 'NOT converged'} (${(c.fit.median / c.evaluations).toFixed(2)} ms per evaluation); ${c.ratio.toFixed(0)}× one simulate() of the same model (${c.evaluation.median.toFixed(2)} ms); with the 90% band ${c.withBand.median.toFixed(0)} ms`;
}

export function fitReport(b: FitBench): string {
  return [
    line('MAP, two compartments, 6 levels, ka CL V1 V2', b.linear, fitTargets.linearMs),
    line('MAP, saturable, 6 levels, Vmax Km V1 V2', b.saturable, fitTargets.saturableMs),
  ].join('\n');
}
