// The covariate table's CSV reader in the core (models/population/covariate-csv.ts): the page
// reads pasted text with it, the command line reads files through server/covariate-csv.ts.
// Quoting follows RFC 4180 §2 (a quoted field may hold commas, line breaks and doubled quotes).
import { describe, expect, it } from 'vitest';
import { parseCovariateCsv, readCovariateHeader } from '../../models/population/covariate-csv.ts';
import { parseScenario } from '../../models/scenario/normalize.ts';
import { parseCovariateCsv as parseCovariateFile } from '../../server/covariate-csv.ts';

describe('covariate CSV text', () => {
  it('reads units from the header, numbers and categories, and quoted fields (RFC 4180 §2)', () => {
    const read = parseCovariateCsv('weight [kg],age,sex,note\r\n64,41,female,"a, b"\r\n"80.5", 3e1 ,male,"say ""hi"""\r\n', '');
    expect(read).toEqual({
      ok: true,
      rows: [
        { weight: '64 kg', age: 41, sex: 'female', note: 'a, b' },
        { weight: '80.5 kg', age: 30, sex: 'male', note: 'say "hi"' },
      ],
    });
  });

  it('names every bad cell as "line N, column X" for pasted text, and applies nothing', () => {
    const read = parseCovariateCsv('weight [kg],sex\n60,female\n6o,male\n70\n,female\n', '');
    expect(read).toEqual({
      ok: false,
      errors: [
        "line 3, column weight: '6o' is not a number (the column is in kg)",
        'line 4: 1 field where the header has 2 (weight, sex)',
        'line 5, column weight: the value is empty; every subject row needs every covariate',
      ],
    });
    expect(parseCovariateCsv('weight [kg]\n', '')).toEqual({ ok: false, errors: ['the text has a header but no rows'] });
    expect(parseCovariateCsv('', '')).toEqual({ ok: false, errors: ['line 1: the header is missing: the covariate names, e.g. "weight [kg],sex"'] });
  });

  it('gives the command line the same rows, its messages prefixed by the file and with control characters escaped', () => {
    const text = 'weight [kg],sex\n60,female\n61,"ma\u001ble"\n6\u0007,male\n';
    const core = parseCovariateCsv(text.replace('6\u0007', '62'), 'people.csv');
    const file = parseCovariateFile(text.replace('6\u0007', '62'), 'people.csv');
    expect(file).toEqual(core);
    // A terminal must not ring or act on what a file holds: the BEL is shown as \u0007.
    expect(parseCovariateFile(text, 'people.csv')).toEqual({ ok: false, errors: ["people.csv line 4, column weight: '6\\u0007' is not a number (the column is in kg)"] });
    expect(parseCovariateCsv(text, 'people.csv')).toEqual({ ok: false, errors: ["people.csv line 4, column weight: '6\u0007' is not a number (the column is in kg)"] });
  });

  // A name is a segment of the cell's JSON path (rows[i].name): "." or "[" in it would read as a
  // nested field. The CSV header and a scenario's rows follow one rule (models/scenario/covariate-name.ts).
  it('refuses a column name holding "." or "[" at line 1 and its column, naming the character; the rows of a scenario the same, once per name', () => {
    const rule = 'a covariate name is a letter, then letters, digits or "_" (at most 40 characters)';
    expect(parseCovariateCsv('weight [kg],body.mass [kg],dose[1] [mg],sex\n60,61,5,female\n', '')).toEqual({
      ok: false,
      errors: [
        `line 1, column 2: 'body.mass' holds '.', which would split its JSON path: ${rule}; a unit goes in brackets after the name, e.g. "weight [kg]"`,
        `line 1, column 3: 'dose[1]' holds '[', which would split its JSON path: ${rule}; a unit goes in brackets after the name, e.g. "weight [kg]"`,
      ],
    });
    const scenario = {
      title: 't',
      compartments: [{ id: 'central', volume: '10 L' }],
      output: { end: '24 h', step: '1 h' },
      population: { subjects: 3, covariateTable: { rows: [{ weight: '60 kg', 'body.mass': 61 }, { weight: '62 kg', 'body.mass': 63, 'dose[1]': 5 }, { weight: '64 kg', 'body.mass': 65 }] } },
    };
    const parsed = parseScenario(scenario);
    expect(parsed.ok ? [] : parsed.problems).toEqual([
      { path: 'population.covariateTable.rows[0]', message: `the column name 'body.mass' holds '.', which would split its JSON path: ${rule}` },
      { path: 'population.covariateTable.rows[1]', message: `the column name 'dose[1]' holds '[', which would split its JSON path: ${rule}` },
    ]);
  });

  it('says an unclosed unit bracket is not closed, rather than that the name holds "["', () => {
    expect(readCovariateHeader('weight [kg')).toEqual({ ok: false, message: 'the unit bracket after \'weight\' is not closed: write "weight [kg]"' });
  });
});
