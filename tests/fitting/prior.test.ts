/**
 * MAP at the ends of the prior's range: a very tight prior (cv 0.1%) holds the estimates at the
 * typical values; a very flat one (cv 500%, the largest cv the scenario format accepts) gives
 * the wls answer with the same residual-error weights. Both follow from the objective
 * ‖r‖² + uᵀu: the prior's pull on u is of order u/(JᵀJ) against the levels' pull.
 */
import { describe, expect, it } from 'vitest';
import { fitScenario } from '../../models/fitting/fit.ts';
import { engineLevels, oneCompartmentOral, withNoise } from './synthetic.ts';

function relative(a: number, b: number): number {
  return Math.abs(a - b) / Math.abs(b);
}

const times = [0.5, 1, 1.5, 2, 3, 4, 6, 8, 10, 12, 16, 24];
const truth = { ka: '0.9 1/h', cl: '4.2 L/h', v: '55 L' };
const levels = withNoise(engineLevels(oneCompartmentOral(truth, []), times), 0.02, 11);

function scenario(cv: string, objective: 'map' | 'wls', residual = '2%') {
  return oneCompartmentOral(
    { ka: { typical: '1.2 1/h', cv, name: 'ka' }, cl: { typical: '3.5 L/h', cv, name: 'CL' }, v: { typical: '45 L', cv, name: 'V' } },
    levels,
    { estimate: ['CL', 'V', 'ka'], objective, weighting: 'residual' },
    { population: { subjects: 10, residual: { proportional: residual } } },
  );
}

describe('map between its limits', () => {
  it('a prior with cv 0.1% returns the typical values', () => {
    const r = fitScenario(scenario('0.1%', 'map', '20%'), { band: false });
    if (!r.ok) throw new Error(JSON.stringify(r.problems));
    expect(r.value.converged).toBe(true);
    // The mode sits where u ≈ Jᵀr: each level pulls with (prior SD / residual SD) × its log
    // residual ≈ (0.001/0.2)·(0.2/0.2) ≈ 5e-3 SD, twelve levels a few hundredths of an SD, i.e.
    // a few 1e-5 relative in the value: below 1e-4.
    expect(relative(r.value.estimates.CL.value, 3.5)).toBeLessThan(1e-4);
    expect(relative(r.value.estimates.V.value, 45)).toBeLessThan(1e-4);
    expect(relative(r.value.estimates.ka.value, 1.2)).toBeLessThan(1e-4);
  });

  it('a prior with cv 500% gives the wls answer to 1e-4', () => {
    const map = fitScenario(scenario('500%', 'map'), { band: false });
    const wls = fitScenario(scenario('500%', 'wls'), { band: false });
    if (!map.ok || !wls.ok) throw new Error('fit failed');
    for (const n of ['CL', 'V', 'ka']) {
      expect(relative(map.value.estimates[n].value, wls.value.estimates[n].value)).toBeLessThan(1e-4);
    }
  });
});
