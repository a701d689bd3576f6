/**
 * The levels CSV parser as the core holds it (models/levels/observations-csv.ts, used by the
 * page's import) beside the command line's wrapper (server/observations-csv.ts): the same rows
 * and messages, the wrapper only making control characters visible for a terminal; and the
 * columns the page offers for a mapping. Expected values are worked by hand from the texts.
 */
import { describe, expect, it } from 'vitest';
import { observationsCsvColumns, parseObservationsCsv as parseCore } from '../../models/levels/observations-csv.ts';
import { splitCsv as coreSplit } from '../../models/scenario/csv.ts';
import { splitCsv } from '../../server/covariate-csv.ts';
import { parseObservationsCsv } from '../../server/observations-csv.ts';

describe('the levels CSV parser in the core', () => {
  it('gives the command line\'s rows; the command line escapes control characters, the core keeps the text as written', () => {
    const good = 'time [h],concentration [mg/L],subject\n1,2.5,A\n\n2,1.25,A\n';
    expect(parseCore(good, 'a.csv')).toEqual(parseObservationsCsv(good, 'a.csv'));
    expect(parseCore(good, 'a.csv')).toEqual({
      ok: true,
      notes: ['a.csv: 1 empty line skipped'],
      observations: [
        { time: '1 h', concentration: '2.5 mg/L', subject: 'A', source: 'a.csv line 2' },
        { time: '2 h', concentration: '1.25 mg/L', subject: 'A', source: 'a.csv line 4' },
      ],
    });
    const bad = 'time,concentration\n1,\u001b[2J\n';
    expect(parseCore(bad, 'b.csv')).toEqual({ ok: false, errors: ["b.csv line 2, column concentration: '\u001b[2J' is not a number"] });
    expect(parseObservationsCsv(bad, 'b.csv')).toEqual({ ok: false, errors: ["b.csv line 2, column concentration: '\\u001b[2J' is not a number"] });
    // One RFC 4180 splitter: the server's name is the core's function.
    expect(splitCsv).toBe(coreSplit);
  });

  it('refuses a subject id over 80 characters rather than cutting it (two ids would become one subject)', () => {
    const long = 'P'.repeat(80);
    const text = `time,concentration,subject\n1,2,${long}A\n2,1,${long}B\n3,1,${long}\n`;
    expect(parseCore(text, 'c.csv')).toEqual({
      ok: false,
      errors: ['c.csv line 2, column subject: the subject id has 81 characters; at most 80', 'c.csv line 3, column subject: the subject id has 81 characters; at most 80'],
    });
  });

  it('offers the file\'s headers without their units and names the needed fields no column holds', () => {
    const text = 'Patient,Sample drawn [h],Level [mg/L],\n';
    expect(observationsCsvColumns(text)).toEqual({ headers: ['Patient', 'Sample drawn', 'Level'], missing: ['time', 'concentration'] });
    expect(observationsCsvColumns(text, { time: 'sample drawn' })).toEqual({ headers: ['Patient', 'Sample drawn', 'Level'], missing: ['concentration'] });
    expect(observationsCsvColumns(text, { time: 'Sample drawn', concentration: 'Level' })?.missing).toEqual([]);
    expect(observationsCsvColumns('')).toBeNull();
    expect(observationsCsvColumns('time,"concentration\n')).toBeNull();
  });
});
