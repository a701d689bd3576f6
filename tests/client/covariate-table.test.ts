// The covariate table as the page edits it (client/src/covariate-table-model.ts): cells follow
// the command line's CSV rule (a number in a column with a unit is written "64 kg"), and the
// switch between distributions and the table keeps what the other choice held (the page must
// never lose typed work; common practice for editors with modes).
import { describe, expect, it } from 'vitest';
import { cellText, cellValue, covariateSource, relabel, switchSource, tableColumns, type SetAside } from '../../client/src/covariate-table-model.ts';

describe('covariate table cells', () => {
  it('reads columns and units from the rows, shows numbers without the unit and writes them back with it', () => {
    const rows = [{ weight: '64 kg', sex: 'female', age: 41 }, { weight: '80.5 kg', sex: 'male', age: 30, crp: '' }];
    expect(tableColumns(rows, new Map([['crp', 'mg/L']]))).toEqual([
      { name: 'weight', unit: 'kg' },
      { name: 'sex', unit: null },
      { name: 'age', unit: null },
      { name: 'crp', unit: 'mg/L' },
    ]);
    expect(cellText('80.5 kg', 'kg')).toBe('80.5');
    // A value in another unit is shown whole, so the page never relabels it silently.
    expect(cellText('150 lb', 'kg')).toBe('150 lb');
    expect([cellValue(' 72 ', 'kg'), cellValue('72', null), cellValue('female', null), cellValue('', 'kg'), cellValue('6o', 'kg')]).toEqual(['72 kg', 72, 'female', '', '6o']);
    expect([relabel('64 kg', 'kg', 'lb'), relabel(41, null, 'year'), relabel('150 lb', 'kg', 'g'), relabel('2 year', 'year', null)]).toEqual(['64 lb', '41 year', '150 lb', 2]);
  });

  it('switches between distributions and the table, keeping each aside until it is chosen again', () => {
    const distributions = { weight: { distribution: 'normal', mean: '75 kg', sd: '14 kg' } };
    const table = { rows: [{ weight: '58 kg' }], draw: 'at random' };
    const population: Record<string, unknown> = { subjects: 10, covariates: distributions };
    const aside: SetAside = {};
    switchSource(population, aside, 'table', () => table);
    expect(population).toEqual({ subjects: 10, covariateTable: table });
    expect(aside).toEqual({ distributions });
    switchSource(population, aside, 'distributions', () => ({ rows: [] }));
    expect(population).toEqual({ subjects: 10, covariates: distributions });
    expect(aside).toEqual({ table });
    switchSource(population, aside, 'both', () => ({ rows: [] }));
    expect(population).toEqual({ subjects: 10, covariates: distributions, covariateTable: table });
    expect(aside).toEqual({});
    expect(covariateSource(population)).toBe('both');
  });
});
