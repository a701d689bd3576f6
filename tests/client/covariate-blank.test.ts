// An empty covariate cell is caught on the page before anything is sent: the server would refuse
// an empty string, and a row without the covariate would silently take the scenario subject's
// value (models/population/covariates.ts assigns the row over the subject). The rule "every
// subject row needs every covariate" is the command line's CSV rule (models/population/covariate-csv.ts).
import { afterEach, describe, expect, it, vi } from 'vitest';
import { refusedBeforeSending, simulate } from '../../client/src/api.ts';
import { blankCellProblems } from '../../client/src/covariate-table-model.ts';

const withRows = (rows: unknown[]) => ({ title: 't', population: { subjects: 5, covariateTable: { rows } } });

describe('empty covariate cells', () => {
  afterEach(() => {
    vi.unstubAllGlobals();
  });

  it('names each empty cell at its path with the row as the page numbers it; a row missing a column counts; a bad column name is left to its own rule', () => {
    const scenario = withRows([
      { weight: '64 kg', sex: 'female', 'a.b': '' },
      { weight: '  ', sex: 'male', 'a.b': 1 },
      { sex: 'male', 'a.b': 2 },
    ]);
    expect(blankCellProblems(scenario)).toEqual([
      { path: 'population.covariateTable.rows[1].weight', message: 'row 2, weight: empty; every subject needs a value' },
      { path: 'population.covariateTable.rows[2].weight', message: 'row 3, weight: empty; every subject needs a value' },
    ]);
    expect(blankCellProblems(withRows([{ weight: 0, sex: 'female' }]))).toEqual([]);
    // Only the table in use is checked: a scenario without one, or naming a file, has nothing to check.
    expect(blankCellProblems({ population: { subjects: 5, covariateTable: { file: 'people.csv' } } })).toEqual([]);
    expect(blankCellProblems({ title: 't' })).toEqual([]);
  });

  it('names at most 20 cells, then counts the rest under the grid', () => {
    const problems = blankCellProblems(withRows(Array.from({ length: 30 }, () => ({ weight: '' }))));
    expect(problems).toHaveLength(21);
    expect(problems[19].path).toBe('population.covariateTable.rows[19].weight');
    expect(problems[20]).toEqual({ path: 'population.covariateTable.rows', message: 'and 10 more empty cells' });
  });

  it('refuses the run as a 400 would read, without calling the server', async () => {
    const fetchSpy = vi.fn();
    vi.stubGlobal('fetch', fetchSpy);
    const scenario = withRows([{ weight: '64 kg' }, { weight: '' }]);
    const outcome = await simulate(scenario, new AbortController().signal);
    expect(outcome).toEqual({ kind: 'invalid', problems: blankCellProblems(scenario) });
    expect(fetchSpy).not.toHaveBeenCalled();
    expect(refusedBeforeSending(withRows([{ weight: '64 kg' }]))).toBeNull();
  });
});
