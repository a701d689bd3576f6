/** Bad population input: each a problem with its JSON path and a message that says what to change. */
import { describe, expect, it } from 'vitest';
import { planPopulation, simulatePopulation } from '../../models/population/population.ts';
import { edited as editedDemo, halvorinDemo as demo } from './halvorin.ts';

/** The demo with 5 subjects, changed by `edit`. */
function edited(edit: (s: typeof demo) => void) {
  return editedDemo((s) => {
    s.population.subjects = 5;
    edit(s);
  });
}

function problemsOf(s: unknown): { path: string; message: string }[] {
  const plan = planPopulation(s);
  return plan.ok ? [] : plan.problems;
}

const cases: [string, (s: typeof demo) => void, string, RegExp][] = [
  ['a correlation matrix that is not positive definite names the pair', (s) => {
    s.transfers[1].cl = { typical: '9 L/h', cv: '20%', name: 'Q' };
    s.population.correlations = [
      { between: ['CL', 'V1'], value: 0.9 },
      { between: ['CL', 'Q'], value: 0.9 },
      { between: ['V1', 'Q'], value: -0.9 },
    ];
  }, 'population.correlations[2].value', /the correlation -0\.9 between 'V1' and 'Q' cannot hold together with the others \(the matrix is not positive definite\)/],
  ['a negative cv', (s) => (s.transfers[0].cl.cv = '-10%'), 'transfers[0].cl.cv', /must not be negative/],
  ['a cv written as a bare percentage', (s) => (s.transfers[0].cl.cv = 30), 'transfers[0].cl.cv', /looks like a percentage/],
  ['a correlation naming a quantity that does not vary', (s) => (s.population.correlations = [{ between: ['CL', 'Vx'], value: 0.2 }]), 'population.correlations[0].between[1]', /no varying quantity is named 'Vx'/],
  ['a covariate relation on a covariate the population lacks', (s) => (s.transfers[0].cl.covariates = [{ on: 'albumin', power: 1, reference: 40 }]), 'transfers[0].cl.covariates[0].on', /no covariate 'albumin'/],
  ['a per-kg dose without a weight', (s) => {
    delete s.subject.weight;
    delete s.population.covariates.weight;
    s.doses[0].amount = '15 mg/kg';
  }, 'doses[0].amount', /per kg of body weight/],
  ['an unknown distribution', (s) => (s.population.covariates.weight.distribution = 'gamma'), 'population.covariates.weight.distribution', /must be one of/],
  ['a distribution field it does not use', (s) => (s.population.covariates.age.mean = '50 year'), 'population.covariates.age.mean', /not used by a uniform/],
  ['subjects over the limit', (s) => (s.population.subjects = 1_000_000), 'population.subjects', /at most 100000/],
  ['a target on an unknown compartment', (s) => (s.population.targets[0].compartment = 'liver'), 'population.targets[0].compartment', /no compartment named 'liver'/],
  ['a target with two measures', (s) => (s.population.targets[0].peak = { atMost: '50 mg/L' }), 'population.targets[0]', /one measure per target/],
  ['a share target without its share', (s) => delete s.population.targets[2].forAtLeast, 'population.targets[2].forAtLeast', /is required/],
  ['a dosing interval beyond the span', (s) => (s.population.targets[0].when = 99), 'population.targets[0].when', /holds 8 dosing intervals/],
  ['steady state of a single dose', (s) => {
    delete s.doses[0].every;
    s.population.targets = [{ trough: { atLeast: '1 mg/L' } }];
  }, 'population.targets[0].when', /no repeated dose line/],
  ['logit-normal on a volume', (s) => (s.compartments[0].volume.variation = 'logit-normal'), 'compartments[0].volume.variation', /for fractions/],
  ['a bioavailability cv no logit-normal reaches', (s) => {
    s.doses[0].bioavailability = { typical: 0.9, cv: '300%' };
  }, 'doses[0].bioavailability.cv', /./],
  ['categories for sex outside female and male', (s) => (s.population.covariates.sex.shares = { f: 1 }), 'population.covariates.sex.shares', /'female' and 'male'/],
  ['a truncation with max below min', (s) => (s.population.covariates.weight.max = '40 kg'), 'population.covariates.weight.max', /greater than min/],
  ['regimens without targets', (s) => {
    s.population.targets = [];
    s.population.regimens = { amounts: ['1 g'] };
  }, 'population.regimens', /needs population.targets/],
];

describe('bad population input', () => {
  for (const [name, edit, path, message] of cases) {
    it(name, () => {
      const problems = problemsOf(edited(edit));
      const hit = problems.find((p) => p.path === path);
      expect(hit, JSON.stringify(problems)).toBeDefined();
      expect(hit?.message).toMatch(message);
    });
  }

  it('a scenario without a population section is refused at `population`', () => {
    const { population: _p, ...single } = demo;
    expect(problemsOf(single)[0].path).toBe('population');
  });

  it('a drawn covariate that breaks a subject names the subject and the distribution that drew it', () => {
    // A normal weight without truncation eventually draws a negative weight.
    const s = edited((x) => {
      x.population.subjects = 400;
      x.population.covariates.weight = { distribution: 'normal', mean: '20 kg', sd: '20 kg' };
    });
    const r = simulatePopulation(s);
    expect(r.ok).toBe(false);
    if (!r.ok) {
      expect(r.problems[0].path).toBe('population.covariates.weight');
      expect(r.problems[0].message).toMatch(/^virtual subject \d+ \(seed 20261202\) drew weight = -[\d.]+ kg: must be positive/);
    }
  });
});
