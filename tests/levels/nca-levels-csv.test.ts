/**
 * `nca LEVELS.csv` reads the file as every levels file is read (models/levels/observations-csv.ts):
 * units in the header converted (to hours and mg/L), `<0.5`, yes/no as 1/0/y/n, ISO 8601
 * date-times, a mapping of the file's own headers, an unread column noted rather than refused,
 * and every bad row as `FILE line N, column NAME: message`. The reference is the same levels
 * written in hours and mg/L: unit conversion is exact arithmetic (1 min = 1/60 h,
 * 1 ug/mL = 1 mg/L = 1000 ng/mL, by definition), so the figures agree to rounding.
 */
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { ncaLevelsOf } from '../../models/levels/nca-levels.ts';
import { parseObservationsCsv } from '../../models/levels/observations-csv.ts';
import { runNcaCli } from '../../server/nca-cli.ts';

const dir = mkdtempSync(join(tmpdir(), 'tidemark-nca-levels-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

interface Out {
  units: { time: string; concentration: string; amount: string };
  subjects: { subject: string; figures: Record<string, number | null>; excluded: { index: number; time: number }[] }[];
  notes: string[];
}

function nca(name: string, text: string, ...args: string[]): Out {
  writeFileSync(join(dir, name), text);
  const o = runNcaCli([name, '--format', 'json', ...args], { folder: dir });
  expect(o.stderr).toBe('');
  expect(o.code).toBe(0);
  return JSON.parse(o.stdout) as Out;
}

// Two invented subjects, an oral dose at 0; B's last level below the limit 0.5.
const hours = [0, 0.5, 1, 2, 4, 8, 12, 24];
const levelsA = [0, 3.1, 5.2, 6.4, 5.0, 3.2, 2.1, 0.62];
const levelsB = [0, 2.2, 4.0, 5.5, 4.6, 2.9, 1.6, null];

const reference = ['subject,time [h],concentration [mg/L],below limit,limit [mg/L]', ...hours.map((t, i) => `A,${t},${levelsA[i]},,`), ...hours.map((t, i) => (levelsB[i] === null ? `B,${t},,yes,0.5` : `B,${t},${levelsB[i]},,`))].join('\n');

function expectSameFigures(a: Out, b: Out) {
  expect(a.subjects.map((s) => s.subject)).toEqual(b.subjects.map((s) => s.subject));
  a.subjects.forEach((s, k) => {
    for (const [name, v] of Object.entries(s.figures)) {
      const w = b.subjects[k].figures[name];
      if (v === null || w === null) expect(w).toBe(v);
      // 1e-12 relative: the conversions round once per value.
      else expect(Math.abs(v - w)).toBeLessThanOrEqual(1e-12 * Math.max(1, Math.abs(w)));
    }
  });
}

describe('nca LEVELS.csv through the levels reader', () => {
  it('[ug/mL] and minutes give the same figures, in h and mg/L, as the same levels in mg/L and h; <0.5 and 1/0 as in observations files', () => {
    const ref = nca('ref.csv', reference, '--dose', '400 mg', '--interval', '24');
    expect(ref.units).toEqual({ time: 'h', concentration: 'mg/L', amount: 'mg' });
    // The same in minutes and ug/mL, B's last level written as a laboratory does ("<0.5"), below limit as 0/1.
    const minutes = [
      'subject,time [min],concentration [ug/mL],below limit',
      ...hours.map((t, i) => `A,${t * 60},${levelsA[i]},0`),
      ...hours.map((t, i) => (levelsB[i] === null ? `B,${t * 60},<0.5,1` : `B,${t * 60},${levelsB[i]},n`)),
    ].join('\n');
    const min = nca('min.csv', minutes, '--dose', '0.4 g', '--interval', '1440');
    expect(min.units).toEqual(ref.units);
    expectSameFigures(min, ref);
    expect(min.subjects[1].excluded).toEqual([{ index: 7, time: 24 }]);
    expect(min.notes).toContain('times written in min are shown in h');
    // CL/F in L/h, not an unconverted mg/(ug/mL·min): 400 mg over AUC0–∞ in mg/L·h.
    const text = runNcaCli(['min.csv', '--dose', '0.4 g'], { folder: dir }).stdout;
    expect(text).toMatch(/CL\/F\s+[\d.]+\s+L\/h\s/);
    // ng/mL: levels 1000 times the number, the same figures once converted.
    const nano = ['subject,time [h],concentration [ng/mL],below limit,limit [ng/mL]', ...hours.map((t, i) => `A,${t},${levelsA[i] * 1000},,`), ...hours.map((t, i) => (levelsB[i] === null ? `B,${t},,y,500` : `B,${t},${(levelsB[i] ?? 0) * 1000},,`))].join('\n');
    expectSameFigures(nca('nano.csv', nano, '--dose', '400', '--interval', '24 h'), ref);
  });

  it('ISO date-times: counted from the earliest, the dose time given as a date-time, the same figures', () => {
    const origin = Date.UTC(2026, 2, 4, 8, 0);
    const iso = (h: number) => new Date(origin + h * 3_600_000).toISOString().slice(0, 16);
    const dated = ['subject,time,concentration [mg/L],below limit,limit [mg/L]', ...hours.map((t, i) => `A,${iso(t)},${levelsA[i]},,`), ...hours.map((t, i) => (levelsB[i] === null ? `B,${iso(t)},,yes,0.5` : `B,${iso(t)},${levelsB[i]},,`))].join('\n');
    const out = nca('dated.csv', dated, '--dose', '400 mg', '--dose-time', '2026-03-04T08:00', '--interval', '24 h');
    expectSameFigures(out, nca('ref2.csv', reference, '--dose', '400 mg', '--interval', '24'));
    expect(out.notes).toContain('date-times count from 2026-03-04 08:00 (UTC), the earliest given');
  });

  it('a mapping names the file\'s own headers; an unread column is noted, not refused', () => {
    const mapped = ['Patient,Sample drawn [h],Level [mg/L],Ward', ...hours.map((t, i) => `A,${t},${levelsA[i]},east`)].join('\n');
    const out = nca('mapped.csv', mapped, '--dose', '400 mg', '--mapping', 'subject=Patient,time=Sample drawn,concentration=Level');
    const ref = nca('refA.csv', ['subject,time [h],concentration [mg/L]', ...hours.map((t, i) => `A,${t},${levelsA[i]}`)].join('\n'), '--dose', '400 mg');
    expectSameFigures(out, ref);
    expect(out.notes.some((n) => n.endsWith('column not read: Ward'))).toBe(true);
    const bad = runNcaCli(['mapped.csv', '--mapping', 'when=Sample drawn'], { folder: dir });
    expect(bad.code).toBe(2);
    expect(bad.stderr).toMatch(/^--mapping takes FIELD=HEADER pairs/);
  });

  it('bad rows by line and column, converted units named; a repeated time in one subject', () => {
    writeFileSync(join(dir, 'bad.csv'), 'subject,time [min],concentration [ug/mL]\nA,0,0\nA,60,-2\nA,sixty,3\nA,120,2 furlongs\nA,60,4\n');
    const o = runNcaCli(['bad.csv'], { folder: dir });
    expect(o.code).toBe(1);
    const lines = o.stderr.trimEnd().split('\n');
    expect(lines).toContain('bad.csv line 3, column concentration: -2 is negative; a measured level is 0 or more');
    expect(lines).toContain("bad.csv line 4, column time: 'sixty' is neither a number nor an ISO 8601 date-time such as 2026-03-04T08:00");
    expect(lines.some((l) => l.startsWith("bad.csv line 5, column concentration: '2 furlongs' is not a number"))).toBe(true);
    // Once the values read, two levels at one time of one subject are named against the first.
    writeFileSync(join(dir, 'twice.csv'), 'subject,time [min],concentration [ug/mL]\nA,0,0\nA,60,2\nA,60,4\n');
    expect(runNcaCli(['twice.csv'], { folder: dir }).stderr).toBe('twice.csv line 4, column time: subject A has a level at 1 h already (line 3)\n');
  });

  it('the core turns rows into profiles by subject and compartment, sorted by time, in one unit system', () => {
    const read = parseObservationsCsv('subject,compartment,time [min],concentration [ng/mL]\nA,central,120,800\nA,central,30,1200\nA,tissue,30,50\n', 'x.csv');
    if (!read.ok) throw new Error(read.errors.join('\n'));
    const levels = ncaLevelsOf(read.observations, { time: 'time', concentration: 'concentration', limit: 'limit' });
    if (!levels.ok) throw new Error(levels.errors.join('\n'));
    expect([...levels.value.groups.keys()]).toEqual(['A / central', 'A / tissue']);
    expect(levels.value.groups.get('A / central')?.map((l) => [l.time, l.concentration])).toEqual([
      [0.5, 1.2],
      [2, 0.8],
    ]);
    expect(levels.value.fileTimeUnit).toBe('min');
  });
});
