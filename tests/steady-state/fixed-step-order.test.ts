/**
 * Steady-state figures with the fixed-step methods: the periodic state comes in closed form
 * for a linear model whatever the method, and the cycle the figures are read from is
 * integrated by the method itself — so its peak, trough and AUCτ must converge to the
 * published closed form at the method's own order as the step is halved.
 */
import { describe, expect, it } from 'vitest';
import { simulate } from '../../models/simulate.ts';

const F = 0.8;
const dose = 200;
const V = 30;
const ka = 1.1;
const k = 0.15;
const tau = 12;

/**
 * Oral multiple dosing at steady state (Gibaldi & Perrier, Pharmacokinetics, 2nd ed., ch. 3):
 * C(t) = F·D·ka/(V(ka − k)) · [e^{−kt}/(1 − e^{−kτ}) − e^{−ka·t}/(1 − e^{−ka·τ})], 0 ≤ t ≤ τ;
 * AUCτ = F·D/CL with CL = k·V.
 */
function closedForm(t: number): number {
  return ((F * dose * ka) / (V * (ka - k))) * (Math.exp(-k * t) / (1 - Math.exp(-k * tau)) - Math.exp(-ka * t) / (1 - Math.exp(-ka * tau)));
}
const tmaxSs = Math.log((ka * (1 - Math.exp(-k * tau))) / (k * (1 - Math.exp(-ka * tau)))) / (ka - k);
const reference = { cmax: closedForm(tmaxSs), trough: closedForm(tau), auc: (F * dose) / (k * V) };

function steadyFigures(method: string, step: number) {
  const r = simulate({
    title: 'oral, fixed step',
    compartments: [{ id: 'gut' }, { id: 'central', volume: V }],
    transfers: [
      { from: 'gut', to: 'central', k: ka },
      { from: 'central', k },
    ],
    doses: [{ into: 'gut', amount: dose, bioavailability: F, every: tau }],
    output: { end: 48, step: 1 },
    solver: { method, step },
  });
  if (!r.ok) throw new Error(JSON.stringify(r.problems));
  const ss = r.value.metrics.steadyState;
  expect(ss?.reached).toBe(true);
  const c = ss?.compartments.find((x) => x.compartment === 'central');
  if (!c) throw new Error('no central figures');
  return { cmax: c.cmax, trough: c.trough, auc: c.auc };
}

describe('steady state with fixed-step methods converges at the method order', () => {
  it.each([
    ['euler', 1, 0.02],
    ['heun', 2, 0.05],
    ['rk4', 4, 0.2],
    ['abm2', 2, 0.05],
  ] as const)('%s (order %s)', (method, order, h) => {
    const coarse = steadyFigures(method, h);
    const fine = steadyFigures(method, h / 2);
    for (const figure of ['cmax', 'trough', 'auc'] as const) {
      const e1 = Math.abs(coarse[figure] / reference[figure] - 1);
      const e2 = Math.abs(fine[figure] / reference[figure] - 1);
      // Small already at the coarse step, and halving the step divides the error by about 2^order
      // (observed order within ±0.5: the asymptotic range, common practice for order checks).
      expect(e1, `${method} ${figure}`).toBeLessThan(0.01);
      if (e1 > 1e-12) expect(Math.log2(e1 / e2), `${method} ${figure} observed order`).toBeGreaterThan(order - 0.5);
    }
  });
});
