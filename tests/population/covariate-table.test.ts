// A covariate table's rows are read when the population is planned: a bad cell is named by its
// row and column (population.covariateTable.rows[i].name), as the page shows it beside the cell,
// not by the first virtual subject that happens to take that row.
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { planPopulation } from '../../models/population/population.ts';

const demo = JSON.parse(readFileSync(new URL('../../samples/halvorin-population-infusion.json', import.meta.url), 'utf8'));

function withRows(rows: Record<string, unknown>[]) {
  const s = JSON.parse(JSON.stringify(demo));
  s.population.subjects = 4;
  delete s.population.regimens;
  delete s.population.covariates;
  s.population.covariateTable = { rows };
  return s;
}

describe('covariate table rows', () => {
  it('names each bad cell by its row and column', () => {
    const plan = planPopulation(
      withRows([
        { weight: '70 kg', height: '170 cm', age: '40 year', sex: 'male', serumCreatinine: '0.9 mg/dL' },
        { weight: 'abc', height: '170 cm', age: '40 year', sex: 'male', serumCreatinine: '0.9 mg/dL' },
        { weight: '60 kg', height: '160 cm', age: '52 year', sex: 'F', serumCreatinine: '0.8 mg/dL' },
        { weight: -3, height: '160 cm', age: '52 year', sex: 'female', serumCreatinine: '0.8 mg/dL' },
      ]),
    );
    expect(plan.ok).toBe(false);
    if (plan.ok) return;
    expect(plan.problems).toEqual([
      { path: 'population.covariateTable.rows[1].weight', message: "expected a number with a mass unit (e.g. kg), got 'abc'" },
      { path: 'population.covariateTable.rows[2].sex', message: "sex takes the categories 'female' and 'male', not 'F'" },
      { path: 'population.covariateTable.rows[3].weight', message: 'must be positive' },
    ]);
  });

  it('names a cell missing from a row that other rows give (it would take the scenario subject\'s value unseen)', () => {
    const full = { height: '170 cm', sex: 'male', serumCreatinine: '0.9 mg/dL' };
    const plan = planPopulation(withRows([{ ...full, weight: '70 kg', age: '40 year' }, { ...full, age: '52 year' }, { ...full, weight: '60 kg' }]));
    expect(plan.ok).toBe(false);
    if (plan.ok) return;
    expect(plan.problems.map((p) => p.path)).toEqual(['population.covariateTable.rows[1].weight', 'population.covariateTable.rows[2].age']);
    expect(plan.problems[0].message).toBe("is missing: row 0 gives 'weight', and every row of the table needs every column it has (a subject without it would take the scenario subject's value unseen)");
  });

  it('plans a table whose every row reads', () => {
    const plan = planPopulation(withRows([{ weight: '70 kg', height: '170 cm', age: '40 year', sex: 'male', serumCreatinine: '0.9 mg/dL' }, { weight: '132 lb', height: '160 cm', age: '52 year', sex: 'female', serumCreatinine: '70 umol/L' }]));
    expect(plan.ok).toBe(true);
    if (plan.ok) expect(plan.value.covariates.rows).toHaveLength(2);
  });
});
