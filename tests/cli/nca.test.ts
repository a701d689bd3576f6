/**
 * `tidemark nca FILE`: the levels CSV read (units from the header, below-limit rows excluded and
 * named, every bad row reported by line and column), the figures the same as the core's, the
 * text, JSON and CSV forms, and the command reached through the program (server/cli.ts).
 * Kept lean: one child process, the rest in this process.
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, describe, expect, it } from 'vitest';
import { ncaProfile } from '../../models/levels/nca.ts';
import { runNcaCli, unitOf } from '../../server/nca-cli.ts';

const root = fileURLToPath(new URL('../../', import.meta.url)).replace(/\/$/, '');
const sample = 'samples/levels-orvanix-oral.csv';
const dir = mkdtempSync(join(tmpdir(), 'tidemark-nca-cli-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const run = (...args: string[]) => runNcaCli(args, { folder: root });
const closing = 'NCA figures describe the levels given; they are not dosing advice.';

interface JsonOut {
  subjects: { subject: string; figures: Record<string, number | null>; flags: { figure: string; message: string }[]; excluded: { index: number; time: number }[] }[];
  summary: { subjects: number; figures: Record<string, { n: number; geometricMean: number | null; median: number | null }> };
}

describe('nca with the terminal line fixed by the user', () => {
  it('--terminal-from T takes exactly the levels at or after T, and λz is their least-squares slope of ln C (common practice)', () => {
    const o = run(sample, '--dose', '400 mg', '--terminal-from', '12', '--format', 'json');
    expect(o.code).toBe(0);
    const out = JSON.parse(o.stdout) as { subjects: { subject: string; figures: Record<string, number | null>; terminal: { times: number[]; chosenBy: string } | null }[] };
    const first = out.subjects[0];
    expect(first.terminal?.chosenBy).toBe('fixed');
    expect(first.terminal?.times).toEqual([12, 24, 36]);
    // The slope by the textbook formula Σ(t − t̄)(y − ȳ)/Σ(t − t̄)², y = ln C, on the file's own levels.
    const rows = readFileSync(join(root, sample), 'utf8').trim().split('\n').slice(1).map((l) => l.split(','));
    const pts = rows.filter((r) => r[0] === first.subject && Number(r[1]) >= 12 && r[3] === '').map((r) => [Number(r[1]), Math.log(Number(r[2]))]);
    const tm = pts.reduce((a, p) => a + p[0], 0) / pts.length;
    const ym = pts.reduce((a, p) => a + p[1], 0) / pts.length;
    const slope = pts.reduce((a, p) => a + (p[0] - tm) * (p[1] - ym), 0) / pts.reduce((a, p) => a + (p[0] - tm) ** 2, 0);
    expect(first.figures.terminalRate).toBeCloseTo(-slope, 12);
    expect(run(sample, '--terminal-from', 'soon').code).toBe(2);
  });
});

describe('nca of a scenario with an nca section', () => {
  // An invented oral drug, one dose, eight levels of one subject (Bateman function, from memory of Gibaldi & Perrier, ch. 1).
  const levelAt = (t: number) => 9 * (Math.exp(-0.08 * t) - Math.exp(-1.2 * t));
  const scenarioWith = (nca: unknown) => ({
    title: 'invented oral drug',
    compartments: [{ id: 'gut' }, { id: 'central', volume: '30 L' }],
    transfers: [{ from: 'gut', to: 'central', k: '1.2 1/h' }, { from: 'central', k: '0.08 1/h' }],
    doses: [{ into: 'gut', amount: '300 mg' }],
    output: { end: '80 h', step: '1 h' },
    observations: [1, 2, 4, 8, 12, 24, 36, 48].map((t) => ({ time: t, compartment: 'central', concentration: levelAt(t), subject: 'S1' })),
    nca,
  });
  const write = (name: string, nca: unknown) => {
    writeFileSync(join(dir, name), JSON.stringify(scenarioWith(nca)));
    return runNcaCli([name, '--format', 'json'], { folder: dir });
  };

  it('fixes the line from the section; --terminal-from overrides it; a wrong start is exit 1 with its path', () => {
    const fixed = JSON.parse(write('fixed.json', { terminal: [{ subject: 'S1', from: '24 h' }] }).stdout) as { profiles: { terminalFixed: unknown; result: { terminal: { times: number[]; chosenBy: string } } }[] };
    expect(fixed.profiles[0].terminalFixed).toEqual({ path: 'nca.terminal[0]', from: 24 });
    expect(fixed.profiles[0].result.terminal).toMatchObject({ times: [24, 36, 48], chosenBy: 'fixed' });
    const text = runNcaCli(['fixed.json', '--terminal-from', '12'], { folder: dir });
    expect(text.code).toBe(0);
    expect(text.stdout).toContain('terminal line: 4 levels at 12, 24, 36, 48 (fixed by the user from 12 h (--terminal-from))');
    const bad = write('bad.json', { terminal: [{ from: 'soon' }] });
    expect(bad.code).toBe(1);
    expect(bad.stderr).toMatch(/nca\.terminal\[0\]\.from.*'soon'/);
    // A bad option value is a usage error, as with a CSV.
    const badOption = runNcaCli(['fixed.json', '--terminal-from', 'soon'], { folder: dir });
    expect(badOption.code).toBe(2);
    expect(badOption.stderr).toMatch(/^--terminal-from expected a number with a time unit.*'soon'/);
  });
});

describe('nca on the demo levels', () => {
  it('text: a table per subject with units from the header, the excluded level named, the summary, the closing line', () => {
    const o = run(sample, '--dose', '400 mg');
    expect(o.stderr).toBe('');
    expect(o.code).toBe(0);
    for (const s of ['subject OR-01', 'subject OR-02', 'subject OR-03']) expect(o.stdout).toContain(s);
    expect(o.stdout).toMatch(/AUC0–last\s+[\d.]+\s+mg\/L·h\s/);
    expect(o.stdout).toMatch(/AUMC0–∞\s+[\d.]+\s+mg\/L·h²/);
    expect(o.stdout).toMatch(/CL\/F\s+[\d.]+\s+L\/h/);
    expect(o.stdout).toMatch(/Vz\/F\s+[\d.]+\s+L\s/);
    expect(o.stdout).toMatch(/λz\s+[\d.]+\s+1\/h/);
    expect(o.stdout).toContain('line 37 (time 36) is below the limit: excluded from every figure');
    expect(o.stdout).toContain('summary over 3 subjects');
    expect(o.stdout).toContain('extravascular (the default route)');
    expect(o.stdout.trimEnd().endsWith(closing)).toBe(true);
  });

  it('JSON: the figures are the core\'s on the same levels (the CSV read right), the summary over the three', () => {
    const o = run(sample, '--dose', '400', '--format', 'json');
    expect(o.code).toBe(0);
    const out = JSON.parse(o.stdout) as JsonOut;
    expect(out.subjects.map((s) => s.subject)).toEqual(['OR-01', 'OR-02', 'OR-03']);
    // OR-03's levels as written in the file, the 36 h row (below the limit) excluded.
    const rows = readFileSync(join(root, sample), 'utf8').split('\n').filter((l) => l.startsWith('OR-03,')).map((l) => l.split(','));
    const times = rows.map((r) => Number(r[1]));
    const concentrations = rows.map((r) => (r[2] === '' ? 0 : Number(r[2])));
    const direct = ncaProfile({ times, concentrations, excluded: [rows.length - 1], dose: { amount: 400, time: 0, route: 'extravascular' } });
    expect(out.subjects[2].figures).toEqual(direct.figures);
    expect(out.subjects[2].excluded).toEqual([{ index: rows.length - 1, time: 36 }]);
    expect(out.summary.subjects).toBe(3);
    expect(out.summary.figures.tmax.median).toBe(2);
    expect(out.summary.figures.aucInf.n).toBe(3);
  });

  it('CSV: one row per subject, units in the header; --rule linear and --interval change the figures', () => {
    const csv = run(sample, '--dose', '400 mg', '--format', 'csv', '--rule', 'linear', '--interval', '24');
    expect(csv.code).toBe(0);
    const lines = csv.stdout.trimEnd().split('\n');
    expect(lines).toHaveLength(4);
    expect(lines[0]).toContain('AUCτ [mg/L·h]');
    expect(lines[0]).toContain('Cavg [mg/L]');
    const linear = JSON.parse(run(sample, '--format', 'json', '--rule', 'linear').stdout) as JsonOut;
    const logDown = JSON.parse(run(sample, '--format', 'json').stdout) as JsonOut;
    expect(linear.subjects[0].figures.aucLast).toBeGreaterThan(logDown.subjects[0].figures.aucLast ?? Infinity);
    expect(logDown.subjects[0].figures.clearance).toBeNull();
  });
});

describe('nca refuses bad input', () => {
  it('every bad row as FILE line N, column NAME, exit 1, no stack', () => {
    const file = join(dir, 'bad.csv');
    writeFileSync(
      file,
      [
        'subject,time [h],concentration [mg/L],below limit',
        'A,0,0,',
        'A,1,-2,', // line 3: negative
        'A,two,3,', // line 4: not a number
        'A,4,1,maybe', // line 5: not yes/no
        'A,1,5,', // line 6: the time again
        'B,0,1', // line 7: a field short
        '',
        'B,2,2026-03-04T08:00,', // line 9: not a number
        'B,2026-03-04T08:00,1,', // line 10: a date-time
      ].join('\n'),
    );
    const o = runNcaCli([file], { folder: dir });
    expect(o.code).toBe(1);
    expect(o.stdout).toBe('');
    const lines = o.stderr.trimEnd().split('\n');
    // The levels reader of every levels file (observations-csv.ts): its cell problems first, then,
    // once every row reads, the problems between rows (a repeated time: the next case).
    expect(lines).toEqual([
      `${file} line 3, column concentration: -2 is negative; a measured level is 0 or more`,
      `${file} line 4, column time: 'two' is neither a number nor an ISO 8601 date-time such as 2026-03-04T08:00`,
      `${file} line 5, column below limit: 'maybe' is not yes or no`,
      `${file} line 7: 3 fields where the header has 4`,
      `${file} line 9, column concentration: '2026-03-04T08:00' is not a number (the column is in mg/L)`,
      `${file} line 10, column time: a date-time in a column with the unit [h]; remove the unit or write elapsed times`,
    ]);
    const repeated = join(dir, 'repeated.csv');
    writeFileSync(repeated, ['subject,time [h],concentration [mg/L]', 'A,0,0', 'A,1,5', 'A,1,4'].join('\n'));
    const again = runNcaCli([repeated], { folder: dir });
    expect(again.code).toBe(1);
    expect(again.stderr).toMatch(new RegExp(`^${repeated.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')} line 4, column time: `, 'm'));
  });

  it('a header without time or with an unknown column; a missing file; usage errors exit 2', () => {
    const file = join(dir, 'head.csv');
    writeFileSync(file, 'subject,sampled,concentration\nA,1,2\n');
    const o = runNcaCli([file], { folder: dir });
    expect(o.code).toBe(1);
    // An unread column is only noted; the missing time column is the problem.
    expect(o.stderr).toContain(`${file} line 1, column time: no such column (the headers are subject, sampled, concentration)`);
    expect(o.stderr).not.toContain('sampled\' is not a column');
    expect(runNcaCli(['nothing.csv'], { folder: dir }).stderr).toBe("cannot read 'nothing.csv': no such file\n");
    expect(run(sample, '--dose', '400', '--route', 'infusion').code).toBe(2);
    expect(run(sample, '--dose', '-4').code).toBe(2);
    expect(run(sample, '--route', 'intravascular').stderr).toMatch(/^--route describes the dose: give --dose too/);
    expect(run(sample, '--bins', '3').stderr).toMatch(/^unknown option --bins/);
    expect(run('--help').stdout).toContain('usage: tidemark nca FILE');
  });
});

describe('units of the figures', () => {
  it('amount over a concentration in the same amount cancels (mg/(mg/L·h) = L/h); otherwise written whole', () => {
    expect(unitOf({ amount: 1, concentration: -1, time: -1 }, { amount: 'mg', concentration: 'mg/L', time: 'h' })).toBe('L/h');
    expect(unitOf({ amount: 1, concentration: -1, time: 0 }, { amount: 'mg', concentration: 'mg/L', time: 'h' })).toBe('L');
    expect(unitOf({ amount: 1, concentration: -1, time: -1 }, { amount: 'mg', concentration: 'µg/L', time: 'h' })).toBe('mg/(µg/L·h)');
    expect(unitOf({ amount: 0, concentration: 1, time: 2 }, { amount: null, concentration: 'ng/mL', time: 'min' })).toBe('ng/mL·min²');
    expect(unitOf({ amount: 0, concentration: 0, time: -1 }, { amount: null, concentration: null, time: 'd' })).toBe('1/d');
  });
});

describe('the program', () => {
  it('tidemark nca runs without the engine through server/cli.ts', () => {
    const p = spawnSync(join(root, 'node_modules/.bin/tsx'), ['server/cli.ts', 'nca', sample, '--dose', '400 mg', '--format', 'json'], { cwd: root, encoding: 'utf8', timeout: 30_000 });
    expect(p.stderr).toBe('');
    expect(p.status).toBe(0);
    const out = JSON.parse(p.stdout) as JsonOut;
    expect(out.subjects).toHaveLength(3);
  });
});
