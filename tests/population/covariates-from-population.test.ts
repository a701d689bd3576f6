// A covariate relation may rest on a covariate the population alone supplies (drawn, or a column
// of its table): the typical subject need not carry it, since every virtual subject's model is
// built from its own covariates. Only a covariate nobody gives is refused, at the relation's path.
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { planPopulation, simulatePopulation } from '../../models/population/population.ts';

const demo = JSON.parse(readFileSync(new URL('../../samples/halvorin-population-infusion.json', import.meta.url), 'utf8'));

function small(): Record<string, any> {
  const s = JSON.parse(JSON.stringify(demo));
  s.population.subjects = 30;
  delete s.population.regimens;
  s.output = { end: '48 h', step: '2 h' };
  return s;
}

describe('covariates the population supplies', () => {
  it('need not be on the scenario subject: the same subjects and figures without it, as every covariate is drawn', () => {
    const withSubject = small();
    const without = small();
    delete without.subject;
    const a = simulatePopulation(withSubject);
    const b = simulatePopulation(without);
    if (!a.ok || !b.ok) throw new Error(JSON.stringify(a.ok ? (b.ok ? null : b.problems) : a.problems));
    expect(b.value.bands).toEqual(a.value.bands);
    expect(b.value.exposure).toEqual(a.value.exposure);
    expect(b.value.attainment).toEqual(a.value.attainment);
  });

  it('may be a drawn covariate of its own name used by a relation, or a column of the table', () => {
    const drawn = small();
    drawn.population.covariates.albumin = { distribution: 'normal', mean: '40 g/L', sd: '5 g/L', min: '20 g/L', max: '60 g/L' };
    drawn.transfers[0].cl.covariates.push({ on: 'albumin', power: -0.5, reference: '40 g/L' });
    expect(planPopulation(drawn).ok).toBe(true);
    const tabled = small();
    delete tabled.population.covariates;
    tabled.population.covariateTable = {
      rows: [
        { weight: '70 kg', height: '170 cm', age: '40 year', sex: 'male', serumCreatinine: '0.9 mg/dL', albumin: '38 g/L' },
        { weight: '60 kg', height: '160 cm', age: '52 year', sex: 'female', serumCreatinine: '0.8 mg/dL', albumin: '44 g/L' },
      ],
    };
    tabled.transfers[0].cl.covariates.push({ on: 'albumin', power: -0.5, reference: '40 g/L' });
    const run = simulatePopulation(tabled);
    expect(run.ok).toBe(true);
  });

  it('are still required of someone: a relation on a covariate nobody gives is refused at its path', () => {
    const s = small();
    s.transfers[0].cl.covariates.push({ on: 'albumin', power: -0.5, reference: '40 g/L' });
    const plan = planPopulation(s);
    expect(plan.ok).toBe(false);
    if (!plan.ok) expect(plan.problems).toContainEqual({ path: 'transfers[0].cl.covariates[1].on', message: "the subject has no covariate 'albumin' (give subject.albumin)" });
  });
});
