/**
 * The observations CSV (RFC 4180 fields, our own header names with units in brackets, a
 * mapping of other headers, ISO 8601 time cells) and the command line reading it relative to
 * the scenario file. Every bad row is reported by line and column; none is dropped.
 */
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { parseObservationsCsv } from '../../server/observations-csv.ts';
import { runCli } from '../../server/cli-commands.ts';

describe('parseObservationsCsv', () => {
  it('reads our headers with units, ISO times, quoting, "<limit" cells and counts empty lines', () => {
    const text = [
      'Time,Compartment,concentration [mg/L],subject,below limit,limit [mg/L],label',
      '2026-03-05T07:45,central,4.1,P-017,,,"trough, before dose 3"',
      '',
      '26.1,central,11.6,P-017,no,,peak',
      '2026-03-08T09:00+01:00,central,,P-017,yes,0.5,follow-up',
      '2026-03-09T09:00,,<0.5,P-017,,,"said ""undetectable"""',
    ].join('\r\n');
    const r = parseObservationsCsv(text, 'levels.csv');
    expect(r).toEqual({
      ok: true,
      notes: ['levels.csv: 1 empty line skipped'],
      observations: [
        { time: '2026-03-05T07:45', compartment: 'central', concentration: '4.1 mg/L', subject: 'P-017', label: 'trough, before dose 3', source: 'levels.csv line 2' },
        { time: 26.1, compartment: 'central', concentration: '11.6 mg/L', subject: 'P-017', label: 'peak', source: 'levels.csv line 4' },
        { time: '2026-03-08T09:00+01:00', compartment: 'central', belowLimit: true, limit: '0.5 mg/L', subject: 'P-017', label: 'follow-up', source: 'levels.csv line 5' },
        { time: '2026-03-09T09:00', belowLimit: true, limit: '0.5 mg/L', subject: 'P-017', label: 'said "undetectable"', source: 'levels.csv line 6' },
      ],
    });
  });

  it('reads other headers through a mapping and puts the time column unit on the value', () => {
    const r = parseObservationsCsv('Sample drawn [min],Level [ug/mL],Ward\n90,3.2,4B\n', 'ward.csv', { time: 'Sample drawn', concentration: 'Level' });
    expect(r).toEqual({ ok: true, notes: ['ward.csv: column not read: Ward'], observations: [{ time: '90 min', concentration: '3.2 ug/mL', source: 'ward.csv line 2' }] });
  });

  it('names a missing column with the headers found', () => {
    const r = parseObservationsCsv('time [h],level\n1,2\n', 'levels.csv');
    expect(r).toEqual({ ok: false, errors: ['levels.csv line 1, column concentration: no such column (the headers are time [h], level); name it "concentration" or map it, e.g. "mapping": { "concentration": "your header" }'] });
  });

  it('reports every bad row by line and column, dropping none', () => {
    const text = [
      'time [h],concentration [mg/L],below limit,limit [mg/L]',
      '1,2,,',
      '2026-03-04,2,,',
      'two,2,,',
      '3,-0.4,,',
      '4,,,',
      '5,1,maybe,',
      '6,,yes,',
      '7,1',
      '2026-02-30T08:00,1,,',
    ].join('\n');
    const r = parseObservationsCsv(text, 'bad.csv');
    expect(r).toEqual({
      ok: false,
      errors: [
        "bad.csv line 3, column time: '2026-03-04' is a date without a time of day; write the time too, e.g. 2026-03-04T08:00",
        "bad.csv line 4, column time: 'two' is neither a number nor an ISO 8601 date-time such as 2026-03-04T08:00",
        'bad.csv line 5, column concentration: -0.4 is negative; a measured level is 0 or more',
        'bad.csv line 6, column concentration: the level is empty; give it, or mark the row below the limit',
        "bad.csv line 7, column below limit: 'maybe' is not yes or no",
        'bad.csv line 8, column limit: a level below the limit needs the limit',
        'bad.csv line 9: 2 fields where the header has 4',
        "bad.csv line 10, column time: '2026-02-30T08:00': 2026-02 has no day 30",
      ],
    });
  });

  it('refuses a date-time in a column given a unit, and a quoting error by its line', () => {
    expect(parseObservationsCsv('time [h],concentration\n2026-03-04T08:00,1\n', 'a.csv')).toEqual({ ok: false, errors: ['a.csv line 2, column time: a date-time in a column with the unit [h]; remove the unit or write elapsed times'] });
    expect(parseObservationsCsv('time,concentration\n1,"2\n', 'a.csv')).toEqual({ ok: false, errors: ['a.csv line 2: a quoted field is never closed'] });
  });
});

describe('the command line reads observations.file relative to the scenario', () => {
  const dir = mkdtempSync(join(tmpdir(), 'tidemark-levels-'));
  afterAll(() => rmSync(dir, { recursive: true, force: true }));
  const scenario = {
    title: 'Fictional compound pellimore',
    clock: { origin: '2026-03-04T08:00' },
    compartments: [{ id: 'gut' }, { id: 'central', volume: '30 L' }],
    transfers: [{ from: 'gut', to: 'central', k: 1.4 }, { from: 'central', cl: 3 }],
    doses: [{ into: 'gut', amount: 250, every: 12, count: 4 }],
    output: { end: 60 },
    observations: { file: 'levels.csv' },
  };

  it('simulates with the rows as observations, each named by its line', () => {
    writeFileSync(join(dir, 'scenario.json'), JSON.stringify(scenario));
    writeFileSync(join(dir, 'levels.csv'), 'time,concentration [mg/L]\n2026-03-05T07:45,4.1\n\n30,5\n');
    const out = runCli(['simulate', 'scenario.json'], { folder: dir });
    expect(out.code).toBe(0);
    expect(out.stderr).toBe(`note: ${join('levels.csv')}: 1 empty line skipped\n`);
    const result = JSON.parse(out.stdout);
    expect(result.observations.map((o: { time: number; path: string }) => [o.time, o.path])).toEqual([[23.75, 'levels.csv line 2'], [30, 'levels.csv line 4']]);
    expect(runCli(['validate', 'scenario.json'], { folder: dir }).stdout).toMatch(/; 2 observations\n$/);
  });

  it('names a row the model refuses by its path and its line, and a missing file', () => {
    writeFileSync(join(dir, 'levels.csv'), 'time,concentration [mg/L],compartment\n2026-03-04T06:00,4.1,central\n3,1,gut\n');
    const bad = runCli(['simulate', 'scenario.json'], { folder: dir });
    expect(bad.code).toBe(1);
    expect(bad.stderr).toContain('observations[0].time: is 2 h before the clock origin 2026-03-04T08:00Z (levels.csv line 2)');
    expect(bad.stderr).toContain("observations[1].compartment: 'gut' has no volume, so it has no concentration to compare a measured level with (levels.csv line 3)");
    writeFileSync(join(dir, 'scenario.json'), JSON.stringify({ ...scenario, observations: { file: 'nothing.csv' } }));
    expect(runCli(['simulate', 'scenario.json'], { folder: dir }).stderr).toBe("scenario.json: observations.file: cannot read 'nothing.csv': no such file\n");
  });
});
