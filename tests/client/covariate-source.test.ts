// The covariate-source switch must leave the population in the state chosen: covariateSource reads
// back what switchSource wrote (common practice: a control shows what the scenario holds).
import { describe, expect, it } from 'vitest';
import { covariateSource, switchSource, type CovariateSource, type SetAside } from '../../client/src/covariate-table-model.ts';

const fresh = () => ({ rows: [{ weight: '70 kg' }] });

describe('switchSource with nothing drawn yet', () => {
  it('reaches "both" from distributions left at their defaults and from a table alone', () => {
    for (const start of [{ subjects: 10 }, { subjects: 10, covariateTable: fresh() }]) {
      const population: Record<string, unknown> = structuredClone(start);
      const aside: SetAside = {};
      switchSource(population, aside, 'both', fresh);
      expect(covariateSource(population)).toBe('both');
      expect(population.covariates).toEqual({});
    }
  });

  it('sets nothing aside for an empty set of distributions, and every choice reads back as chosen', () => {
    const population: Record<string, unknown> = { subjects: 10 };
    const aside: SetAside = {};
    const order: CovariateSource[] = ['both', 'table', 'distributions', 'both', 'distributions'];
    for (const to of order) {
      switchSource(population, aside, to, fresh);
      expect(covariateSource(population)).toBe(to);
    }
    expect(aside.distributions).toBeUndefined();
  });
});
