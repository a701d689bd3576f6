/**
 * Benchmark scenarios: the fictional oral compound "halvexin" in a two-compartment
 * model (gut depot → central ↔ peripheral, elimination from central), one oral dose a
 * day for a year. The parameters are invented; they are chosen so that the disposition
 * is neither stiff nor trivial (half-lives of about 0.6 h, 1.2 h and 17 h).
 */

/** Model parameters in mg, L, h. */
export const halvexin = {
  /** Absorption rate constant gut → central (1/h). */
  ka: 1.1,
  /** Central volume (L). */
  v1: 30,
  /** Peripheral volume (L). */
  v2: 60,
  /** Clearance from central (L/h): k10 = cl / v1 = 0.15 1/h. */
  cl: 4.5,
  /** Intercompartmental clearance (L/h): k12 = q / v1 = 0.3 1/h, k21 = q / v2 = 0.15 1/h. */
  q: 9,
  /** Oral dose (mg) and its bioavailability: 150 mg reach the gut depot each day. */
  dose: 200,
  bioavailability: 0.75,
  /** Dosing interval (h) and number of doses. */
  every: 24,
  count: 365,
  /** Simulated span (h): one year. */
  end: 365 * 24,
  /** Saturable variant: Michaelis–Menten elimination from central (mg/h, mg/L). */
  vmax: 9,
  km: 1.5,
} as const;

/** First-order rate constants (1/h) derived from the parameters above. */
export const rates = {
  ka: halvexin.ka,
  k10: halvexin.cl / halvexin.v1,
  k12: halvexin.q / halvexin.v1,
  k21: halvexin.q / halvexin.v2,
};

export interface SolverBlock {
  method: 'auto' | 'exact' | 'dopri5' | 'dop853';
  rtol?: number;
  atol?: number;
}

/** The scenario JSON of the linear model, with the given solver block and output step (h). */
export function linearScenario(solver: SolverBlock, step = 1): Record<string, unknown> {
  return scenario('Halvexin 200 mg by mouth daily for a year (benchmark)', false, solver, step);
}

/** The same schedule with saturable (Michaelis–Menten) elimination in place of the clearance. */
export function saturableScenario(solver: SolverBlock, step = 1): Record<string, unknown> {
  return scenario('Halvexin with saturable elimination, 200 mg daily for a year (benchmark)', true, solver, step);
}

function scenario(title: string, saturable: boolean, solver: SolverBlock, step: number): Record<string, unknown> {
  const h = halvexin;
  return {
    title,
    units: { amount: 'mg', volume: 'L', time: 'h' },
    compartments: [
      { id: 'gut', label: 'Gut depot' },
      { id: 'central', label: 'Plasma', volume: h.v1 },
      { id: 'peripheral', label: 'Tissue', volume: h.v2 },
    ],
    transfers: [
      { from: 'gut', to: 'central', k: h.ka, label: 'absorption' },
      saturable
        ? { from: 'central', vmax: h.vmax, km: h.km, label: 'saturable metabolism' }
        : { from: 'central', cl: h.cl, label: 'clearance' },
      { from: 'central', to: 'peripheral', cl: h.q, label: 'distribution' },
      { from: 'peripheral', to: 'central', cl: h.q, label: 'redistribution' },
    ],
    doses: [{ into: 'gut', amount: h.dose, every: h.every, count: h.count, bioavailability: h.bioavailability }],
    output: { end: h.end, step },
    solver,
  };
}

/** Typical amount scale (mg) that turns a relative tolerance into the absolute one: atol = rtol · 1e-2 mg. */
export const AMOUNT_SCALE = 1e-2;
