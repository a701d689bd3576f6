/**
 * Identifiability in words: with first-order elimination written as a rate constant, an oral
 * model's levels depend on bioavailability and volume only through F/V (Gibaldi & Perrier eq.
 * 1.61 with k fixed), so JᵀWJ is singular in that direction and the fit must say so, naming both.
 */
import { describe, expect, it } from 'vitest';
import { fitScenario } from '../../models/fitting/fit.ts';
import { symmetricEigen } from '../../models/fitting/dense.ts';
import { engineLevels, oneCompartmentOral, withNoise } from './synthetic.ts';
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

  it('F, V and CL together: all three named, paths in their own case', () => {
    // With clearance instead of a rate constant, the levels depend on F/V and CL/V only (eq. 1.61,
    // k = CL/V): F, V and CL scaled by one factor leave every prediction unchanged. F sits on a
    // logit scale, V and CL on log scales; weighed in those coordinates the weak direction is
    // mostly F (a logit step moves F by (1 − F) of a log step), as relative changes of the values
    // it is F, V and CL alike.
    const withCl = (v: string, f: number, cl: string, levels: { time: number; concentration: number }[], fit?: unknown): ScenarioInput => {
      const s = oral(v, f, levels, fit) as ScenarioInput & { transfers: unknown[] };
      s.transfers = [{ from: 'gut', to: 'central', k: '1 1/h' }, { from: 'central', cl }];
      return s;
    };
    // Measured with a 10% proportional noise, so the curvature is (barely) invertible and every
    // relative standard error is huge.
    const levels = withNoise(engineLevels(withCl('50 L', 0.9, '5 L/h', []), [1, 2, 4, 8, 12, 24]), 0.1, 5);
    const r = fitScenario(withCl('40 L', 0.8, '4 L/h', levels, { estimate: ['doses[0].bioavailability', 'compartments[1].volume', 'transfers[1].cl'], objective: 'wls' }), { band: false });
    if (!r.ok) throw new Error(JSON.stringify(r.problems));
    expect(r.value.conditionNumber).toBeGreaterThan(1e10);
    expect(r.value.identifiability[0]).toContain('cannot tell doses[0].bioavailability, compartments[1].volume and transfers[1].cl apart');
    // The lines open with our own words, so the message's capital never falls on a path.
    expect(r.value.message).toContain('The levels cannot tell doses[0].bioavailability');
  });

  it('a path poorly determined keeps its case in the message', () => {
    // Levels only from 12 h on, long after a fast absorption (ka 3/h, e^(−36) of the dose left in
    // the gut): they hardly depend on ka, so its relative standard error is far over 100%.
    const levels = withNoise(engineLevels(oneCompartmentOral({ ka: '3 1/h', cl: '4 L/h', v: '50 L' }, []), [12, 16, 20, 24, 30, 36]), 0.1, 3);
    const r = fitScenario(oneCompartmentOral({ ka: '2 1/h', cl: '5 L/h', v: '50 L' }, levels, { estimate: ['transfers[0].k', 'transfers[1].cl'], objective: 'wls' }), { band: false });
    if (!r.ok) throw new Error(JSON.stringify(r.problems));
    if (process.env.FIT_VERBOSE) console.log(r.value.message);
    expect(r.value.estimates['transfers[0].k'].relativeStandardError).toBeGreaterThan(1);
    expect(r.value.message).toContain('The levels determine transfers[0].k poorly');
    expect(r.value.message).not.toContain('Transfers[0].k');
  });

  it('the Jacobi eigenvalues of a known symmetric matrix (Golub & Van Loan §8.5)', () => {
    // [[2, 1], [1, 2]] has eigenvalues 1 and 3 (by hand: det(A − λI) = (2 − λ)² − 1).
    const { values } = symmetricEigen(Float64Array.from([2, 1, 1, 2]), 2);
    expect([...values].sort()).toEqual([expect.closeTo(1, 14), expect.closeTo(3, 14)]);
  });
});
