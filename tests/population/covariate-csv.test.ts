// The covariate table's CSV reader in the core (models/population/covariate-csv.ts): the page
// reads pasted text with it, the command line reads files through server/covariate-csv.ts.
// Quoting follows RFC 4180 §2 (a quoted field may hold commas, line breaks and doubled quotes).
import { describe, expect, it } from 'vitest';
import { parseCovariateCsv } from '../../models/population/covariate-csv.ts';
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
});
