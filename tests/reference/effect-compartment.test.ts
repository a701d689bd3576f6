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
