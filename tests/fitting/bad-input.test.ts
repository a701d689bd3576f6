/** A fit the scenario cannot support is refused with a message at the JSON path of its cause. */
import { describe, expect, it } from 'vitest';
import { fitScenario } from '../../models/fitting/fit.ts';
import { oneCompartmentOral } from './synthetic.ts';

const named = { ka: { typical: '1.1 1/h', cv: '40%', name: 'ka' }, cl: { typical: '3.6 L/h', cv: '30%', name: 'CL' }, v: { typical: '38 L', name: 'V', cv: '25%' } };
const two = [{ time: 2, concentration: 6.1 }, { time: 12, concentration: 3.2 }];

function problems(input: unknown): { path: string; message: string }[] {
  const r = fitScenario(input, { band: false });
  if (r.ok) throw new Error('expected the fit to be refused');
  return r.problems;
}

describe('fit refuses bad input with its path', () => {
  it('more quantities than usable levels (wls)', () => {
    const p = problems(oneCompartmentOral(named, two, { estimate: ['CL', 'V', 'ka'], objective: 'wls' }));
    expect(p).toContainEqual({ path: 'fit.estimate', message: expect.stringContaining('3 quantities from 2 usable levels') });
  });

  it('a quantity that does not exist, with the names there are', () => {
    const p = problems(oneCompartmentOral(named, two, { estimate: ['CL', 'V', 'Q'], objective: 'wls' }));
    expect(p).toContainEqual({ path: 'fit.estimate[2]', message: expect.stringContaining("no quantity named 'Q' — named quantities are V, ka, CL") });
  });

  it('a path where the scenario has no quantity', () => {
    const p = problems(oneCompartmentOral(named, two, { estimate: ['transfers[7].cl'] }));
    expect(p).toContainEqual({ path: 'fit.estimate[0]', message: expect.stringContaining("no model quantity at 'transfers[7].cl'") });
  });

  it('map for a quantity without a cv', () => {
    const s = oneCompartmentOral({ ...named, v: '38 L' }, two, { estimate: ['CL', 'compartments[1].volume'], objective: 'map' }, { population: { subjects: 5, residual: { proportional: '10%' } } });
    expect(problems(s)).toContainEqual({ path: 'fit.estimate[1]', message: expect.stringContaining('has no cv, so a map fit has no prior for it') });
  });

  it('map without a residual error', () => {
    const s = oneCompartmentOral(named, two, { estimate: ['CL'], objective: 'map' }, { population: { subjects: 5 } });
    expect(problems(s)).toContainEqual({ path: 'population.residual', message: expect.stringContaining('needs the residual error') });
  });

  it('no observations, and only levels below the limit', () => {
    expect(problems(oneCompartmentOral(named, [], { estimate: ['CL'] }))).toContainEqual({ path: 'observations', message: expect.stringContaining('the scenario has none') });
    const below = { ...oneCompartmentOral(named, [], { estimate: ['CL'] }), observations: [{ time: 30, belowLimit: true, limit: '0.5 mg/L' }] };
    expect(problems(below)).toContainEqual({ path: 'observations', message: expect.stringContaining('every level is below its limit') });
  });

  it('no fit section, and the same quantity twice', () => {
    expect(problems(oneCompartmentOral(named, two))).toContainEqual({ path: 'fit', message: expect.stringContaining('no `fit` section') });
    expect(problems(oneCompartmentOral(named, two, { estimate: ['CL', 'transfers[1].cl'] }))).toContainEqual({ path: 'fit.estimate[1]', message: expect.stringContaining('already estimated at fit.estimate[0]') });
  });

  it('a lag of 0 cannot start a fit on the log scale', () => {
    const s = oneCompartmentOral(named, two, { estimate: ['doses[0].lag'] });
    (s.doses as { lag?: string }[])[0].lag = '0 h';
    expect(problems(s)).toContainEqual({ path: 'doses[0].lag', message: expect.stringContaining('must be positive') });
  });

  it('censored levels without a residual error', () => {
    const p = problems(oneCompartmentOral(named, two, { estimate: ['CL'], objective: 'wls', belowLimit: 'censored' }));
    expect(p).toContainEqual({ path: 'fit.belowLimit', message: expect.stringContaining('"censored" needs population.residual') });
  });
});
