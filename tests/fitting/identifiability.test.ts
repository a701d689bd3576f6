/**
 * Identifiability in words: with first-order elimination written as a rate constant, an oral
 * model's levels depend on bioavailability and volume only through F/V (Gibaldi & Perrier eq.
 * 1.61 with k fixed), so JᵀWJ is singular in that direction and the fit must say so, naming both.
 */
import { describe, expect, it } from 'vitest';
import { fitScenario } from '../../models/fitting/fit.ts';
import { symmetricEigen } from '../../models/fitting/dense.ts';
import { engineLevels } from './synthetic.ts';
import type { ScenarioInput } from '../../models/scenario/schema.ts';

function oral(v: string, f: number, levels: { time: number; concentration: number }[], fit?: unknown): ScenarioInput {
  return {
    title: 'Invented oral drug, elimination by a rate constant',
    compartments: [{ id: 'gut' }, { id: 'central', volume: v }],
    transfers: [{ from: 'gut', to: 'central', k: '1 1/h' }, { from: 'central', k: '0.1 1/h' }],
    doses: [{ into: 'gut', amount: '400 mg', at: 0, bioavailability: f }],
    output: { end: '24 h', step: '1 h' },
    observations: levels.map((l) => ({ time: l.time, compartment: 'central', concentration: l.concentration })),
    ...(fit ? { fit } : {}),
  } as ScenarioInput;
}

describe('identifiability', () => {
  it('F and V together: the levels cannot tell them apart', () => {
    const levels = engineLevels(oral('50 L', 0.7, []), [1, 2, 4, 8, 12, 24]);
    const r = fitScenario(oral('40 L', 0.5, levels, { estimate: ['compartments[1].volume', 'doses[0].bioavailability'], objective: 'wls' }), { band: false });
    if (!r.ok) throw new Error(JSON.stringify(r.problems));
    expect(r.value.conditionNumber).toBeGreaterThan(1e10);
    expect(r.value.identifiability[0]).toContain('cannot tell compartments[1].volume and doses[0].bioavailability apart');
    expect(r.value.message).toContain('cannot tell');
    // Whatever split it settles on, F/V is the one the levels hold: 0.7/50.
    const e = r.value.estimates;
    expect(Math.abs(e['doses[0].bioavailability'].value / e['compartments[1].volume'].value / (0.7 / 50) - 1)).toBeLessThan(1e-6);
  });

  it('the Jacobi eigenvalues of a known symmetric matrix (Golub & Van Loan §8.5)', () => {
    // [[2, 1], [1, 2]] has eigenvalues 1 and 3 (by hand: det(A − λI) = (2 − λ)² − 1).
    const { values } = symmetricEigen(Float64Array.from([2, 1, 1, 2]), 2);
    expect([...values].sort()).toEqual([expect.closeTo(1, 14), expect.closeTo(3, 14)]);
  });
});
