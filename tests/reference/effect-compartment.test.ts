/**
 * The effect compartment of a link model: a compartment of negligible volume fed from the
 * central one, whose concentration follows the plasma's with a first-order delay ke0.
 * With k1e·Vc = ke0·Ve the effect concentration after an IV bolus is
 *   Ce(t) = (D/Vc)·ke0/(ke0 − k)·(e^{−kt} − e^{−ke0·t}),
 * peaking at t = ln(ke0/k)/(ke0 − k) (Sheiner et al., Clin. Pharmacol. Ther. 25 (1979)
 * 358–371; from memory). Such tiny volumes put 1/Ve ≈ 1e9 in the AUC row of the system
 * matrix, which once swamped the effect amounts in rounding (Cmax 2% off, Tmax 0.5 h).
 */
import { describe, it } from 'vitest';
import { concentration, expectWithin, figures, rowsOf, run } from './helpers.ts';

describe('effect compartment of negligible volume, IV bolus (exact path)', () => {
  // Fictional "trenavol": 100 mg IV into Vc = 10 L, elimination k = 0.3 1/h, ke0 = 0.7 1/h.
  const [dose, vc, k, ke0] = [100, 10, 0.3, 0.7];

  it.each([1e-3, 1e-6, 1e-9])('Ve = %s L: Ce(t), its peak and its AUC equal the closed form within 1e-12', (ve) => {
    const k1e = (ke0 * ve) / vc; // the link condition k1e·Vc = ke0·Ve
    const result = run({
      title: 'Trenavol 100 mg IV with an effect compartment',
      compartments: [{ id: 'central', volume: vc }, { id: 'effect', volume: ve }],
      transfers: [
        { from: 'central', k },
        { from: 'central', to: 'effect', k: k1e },
        { from: 'effect', k: ke0 },
      ],
      doses: [{ into: 'central', amount: dose }],
      output: { end: 24, step: 0.5 },
    });
    // Central loses k + k1e; the closed form with that total rate is exact for this model.
    const kc = k + k1e;
    const scale = (dose / vc) * (k1e * vc) / ve / (ke0 - kc);
    const ce = (t: number) => scale * (Math.exp(-kc * t) - Math.exp(-ke0 * t));
    const c = concentration(result, 'effect');
    let worst = 0;
    const peak = ce(Math.log(ke0 / kc) / (ke0 - kc));
    for (const row of rowsOf(result)) worst = Math.max(worst, Math.abs(c[row.index] - ce(row.t)) / peak);
    // Exact path: only rounding, a few ulps per propagator (1e-12 is the tolerance of the
    // project's other exact-path checks).
    expectWithin(worst, 1e-12, `effect compartment Ce(t), Ve ${ve}`);
    const f = figures(result, 'effect').overall;
    const tmax = Math.log(ke0 / kc) / (ke0 - kc);
    expectWithin(Math.abs(f.cmax - peak) / peak, 1e-12, `effect compartment Cmax, Ve ${ve}`);
    expectWithin(Math.abs(f.tmax - tmax), 1e-6, `effect compartment Tmax (h), Ve ${ve}`); // located by root finding to 1e-6 h
    const auc = scale * ((1 - Math.exp(-kc * 24)) / kc - (1 - Math.exp(-ke0 * 24)) / ke0);
    expectWithin(Math.abs(f.auc - auc) / auc, 1e-12, `effect compartment AUC 0–24 h, Ve ${ve}`);
  });
});

describe('effect compartment of negligible volume at steady state', () => {
  it('exact path, 100 mg every 12 h, Ve = 1e-9 L: trough by superposition, and Cavg,e = Cavg,c (the link condition)', () => {
    // Steady state of repeated boluses by superposition (Gibaldi & Perrier ch. 3; common practice):
    //   Ce,ss(t) = (D/Vc)·ke0/(ke0 − k)·(e^{−kt}/(1 − e^{−kτ}) − e^{−ke0·t}/(1 − e^{−ke0·τ})), 0 ≤ t < τ.
    const [dose, vc, k, ke0, ve, tau] = [100, 10, 0.3, 0.7, 1e-9, 12];
    const k1e = (ke0 * ve) / vc;
    const result = run({
      title: 'Trenavol 100 mg IV every 12 h with an effect compartment',
      compartments: [{ id: 'central', volume: vc }, { id: 'effect', volume: ve }],
      transfers: [
        { from: 'central', k },
        { from: 'central', to: 'effect', k: k1e },
        { from: 'effect', k: ke0 },
      ],
      doses: [{ into: 'central', amount: dose, every: tau, count: 30 }],
      output: { end: 360, step: 1 },
    });
    const ss = result.metrics.steadyState;
    const [c, e] = ['central', 'effect'].map((id) => ss?.compartments.find((f) => f.compartment === id));
    if (!ss?.reached || !c || !e || e.trough === null) throw new Error('no steady state');
    const kc = k + k1e;
    const scale = ((dose / vc) * (k1e * vc)) / ve / (ke0 - kc);
    const trough = scale * (Math.exp(-kc * tau) / -Math.expm1(-kc * tau) - Math.exp(-ke0 * tau) / -Math.expm1(-ke0 * tau));
    expectWithin(Math.abs(e.trough - trough) / trough, 1e-12, 'effect compartment steady trough, Ve 1e-9');
    // What enters e over a cycle, k1e·Vc·AUCc, leaves it, ke0·Ve·AUCe: with k1e·Vc = ke0·Ve the AUCs agree.
    expectWithin(Math.abs(e.cavg - c.cavg) / c.cavg, 1e-12, 'effect compartment Cavg,e = Cavg,c, Ve 1e-9');
  });

  it('saturable elimination, 500 mg every 12 h, Ve = 1e-9 L, ke0 = 0.054 1/h: Cavg,e = Cavg,c', () => {
    // The effect amounts are ~1e-8 mg, far below atol (1e-10 mg) divided by the tolerance: the
    // search must judge them on their own scale (their floor shrinks with the volume).
    const [vc, ve, ke0] = [10, 1e-9, 0.054];
    const result = run({
      title: 'Kestrin 500 mg IV every 12 h with an effect compartment',
      compartments: [{ id: 'central', volume: vc }, { id: 'effect', volume: ve }],
      transfers: [
        { from: 'central', vmax: 50, km: 2 },
        { from: 'central', to: 'effect', k: (ke0 * ve) / vc },
        { from: 'effect', k: ke0 },
      ],
      doses: [{ into: 'central', amount: 500, every: 12, count: 20 }],
      output: { end: 240, step: 1 },
    });
    const ss = result.metrics.steadyState;
    const [c, e] = ['central', 'effect'].map((id) => ss?.compartments.find((f) => f.compartment === id));
    if (!ss?.reached || !c || !e) throw new Error('no steady state');
    // Determined to 100·rtol = 1e-6 per compartment; the cycle AUCs to about that.
    expectWithin(Math.abs(e.cavg - c.cavg) / c.cavg, 1e-5, 'saturable effect compartment Cavg,e = Cavg,c');
  });
});
