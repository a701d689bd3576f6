/**
 * The population command line: shards run as separate processes and merged give exactly the
 * unsharded run (the local equivalent of a cluster array job), merge refuses parts that do not
 * make up one run, the csv and text outputs, and covariate tables read from CSV files.
 */
import { spawn, spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runCli } from '../../server/cli.ts';
import { parseCovariateCsv, splitCsv } from '../../server/covariate-csv.ts';
import { base64ToFloat64, float64ToBase64 } from '../../server/population-parts.ts';

const root = fileURLToPath(new URL('../../', import.meta.url)).replace(/\/$/, '');
const program = join(root, 'dist/server/cli.js');

/** A fictional one-compartment infusion with variable clearance and volume (invented numbers). */
const scenario = (population: Record<string, unknown>) => ({
  title: 'Fictional infusion for the population command line',
  units: { amount: 'mg', volume: 'L', time: 'h' },
  subject: { weight: '70 kg', height: '170 cm', age: '50 year', sex: 'female', serumCreatinine: '0.9 mg/dL' },
  compartments: [{ id: 'central', volume: { typical: '20 L', cv: '20%', name: 'V', covariates: [{ on: 'weight', power: 1, reference: '70 kg' }] } }],
  transfers: [{ from: 'central', cl: { typical: '5 L/h', cv: '30%', name: 'CL', covariates: [{ on: 'crcl', power: 0.75, reference: '100 mL/min' }] } }],
  doses: [{ into: 'central', amount: '1000 mg', duration: '1 h', every: '12 h' }],
  output: { end: '2 day', step: '1 h' },
  population: {
    subjects: 40,
    seed: 424242,
    correlations: [{ between: ['CL', 'V'], value: 0.3 }],
    residual: { proportional: '10%' },
    targets: [{ trough: { atLeast: '8 mg/L' } }, { peak: { atMost: '80 mg/L' } }],
    regimens: { amounts: ['500 mg', '1000 mg'] },
    ...population,
  },
});

const drawn = {
  covariates: {
    weight: { distribution: 'normal', mean: '75 kg', sd: '12 kg', min: '45 kg', max: '130 kg' },
    sex: { distribution: 'categories', shares: { female: 0.5, male: 0.5 } },
  },
};

let dir: string;

/** The environment of the test run without what an outer `npm test` passed down. */
function cleanEnv(): NodeJS.ProcessEnv {
  const env = { ...process.env };
  for (const key of Object.keys(env)) if (key === 'INIT_CWD' || key.startsWith('npm_')) delete env[key];
  return env;
}

/** The built program as a child process, not waited for: several run at once. */
function cli(args: string[]): Promise<{ code: number | null; stdout: string; stderr: string }> {
  return new Promise((resolve) => {
    const child = spawn('node', [program, ...args], { cwd: dir, env: cleanEnv() });
    let stdout = '';
    let stderr = '';
    child.stdout.on('data', (d) => (stdout += d));
    child.stderr.on('data', (d) => (stderr += d));
    child.on('close', (code) => resolve({ code, stdout, stderr }));
  });
}

const json = (file: string) => JSON.parse(readFileSync(join(dir, file), 'utf8')) as Record<string, unknown>;
const noStack = (text: string) => expect(text).not.toContain('    at ');

beforeAll(() => {
  // The program as `npm run cli` runs it: built once, if the sources changed since.
  const build = spawnSync('node', ['scripts/build-server.mjs', '--if-stale', '--quiet'], { cwd: root, encoding: 'utf8', timeout: 180_000 });
  expect(build.status, build.stderr).toBe(0);
  dir = mkdtempSync(join(tmpdir(), 'tidemark-population-'));
  writeFileSync(join(dir, 'pop.json'), JSON.stringify(scenario(drawn)));
  writeFileSync(join(dir, 'other.json'), JSON.stringify(scenario({ ...drawn, seed: 7 })));
}, 180_000);

afterAll(() => {
  rmSync(dir, { recursive: true, force: true });
});

describe('shards run as separate processes and merged', () => {
  it('three parts run in parallel, merged, deep-equal the unsharded run with 1, 2 and the default threads', async () => {
    const runs = await Promise.all([
      cli(['population', 'pop.json', '--shard', '1/3', '--out', 'part1.json']),
      cli(['population', 'pop.json', '--shard', '2/3', '--out', 'part2.json']),
      cli(['population', 'pop.json', '--shard', '3/3', '--out', 'part3.json']),
    ]);
    runs.forEach((r) => expect(r.code, r.stderr).toBe(0));
    expect(runs[1].stderr).toContain('wrote part 2 of 3 (subjects 13 to 25)');
    const part = json('part2.json');
    expect(part.format).toBe('tidemark-population-part');
    expect(part).toMatchObject({ version: 1, shard: { index: 2, of: 3 }, first: 13, count: 13, overrides: { subjects: 40, seed: 424242 } });

    // Parts named in any order.
    const merged = await cli(['merge', 'part3.json', 'part1.json', 'part2.json', '--out', 'merged.json']);
    expect(merged.code, merged.stderr).toBe(0);
    const [whole, one, two] = await Promise.all([
      cli(['population', 'pop.json', '--out', 'whole.json']),
      cli(['population', 'pop.json', '--threads', '1', '--out', 'one.json']),
      cli(['population', 'pop.json', '--threads', '2', '--out', 'two.json']),
    ]);
    [whole, one, two].forEach((r) => expect(r.code, r.stderr).toBe(0));
    // Subject i's numbers depend only on (seed, i): any split gives the same result, bit for bit —
    // with two threads the bands' output times are split between them too, the rest found by one.
    expect(json('merged.json')).toEqual(json('whole.json'));
    expect(json('one.json')).toEqual(json('whole.json'));
    expect(json('two.json')).toEqual(json('whole.json'));
    // And the importer's in-thread run (runCli) gives the same JSON text.
    expect(runCli(['population', 'pop.json'], { folder: dir }).stdout).toBe(readFileSync(join(dir, 'whole.json'), 'utf8'));
    const result = json('whole.json');
    expect(result.subjects).toBe(40);
    expect(result.caution).toMatch(/not dosing advice/);
  }, 300_000);

  it('merge refuses a missing part, a duplicated part, another scenario\'s part and a file that is no part', async () => {
    const [other] = await Promise.all([cli(['population', 'other.json', '--shard', '2/3', '--out', 'other2.json'])]);
    expect(other.code, other.stderr).toBe(0);
    const cases: [string[], RegExp][] = [
      [['part1.json', 'part3.json'], /^part 2 of 3 is missing\n$/],
      [['part1.json', 'part2.json', 'part2.json', 'part3.json'], /^part2\.json: part 2 of 3 is given twice \(also part2\.json\)\n$/],
      [['part1.json', 'other2.json', 'part3.json'], /^other2\.json: a part of another scenario or other settings \(fingerprint [0-9a-f]{12}; part1\.json has [0-9a-f]{12}\)\n$/],
      [['part1.json', 'pop.json'], /^pop\.json: not a population part file/],
    ];
    for (const [parts, message] of cases) {
      const out = runCli(['merge', ...parts], { folder: dir });
      expect(out.code).toBe(1);
      expect(out.stderr).toMatch(message);
      noStack(out.stderr);
    }
    // A part changed after it was written no longer matches its fingerprint.
    const edited = json('part1.json');
    (edited.overrides as { seed: number }).seed = 1;
    writeFileSync(join(dir, 'edited.json'), JSON.stringify(edited));
    const out = runCli(['merge', 'edited.json', 'part2.json', 'part3.json'], { folder: dir });
    expect(out.code).toBe(1);
    expect(out.stderr).toMatch(/^edited\.json: the fingerprint .* does not match/);
  }, 300_000);
});

describe('usage errors', () => {
  it.each([
    [['--shard', '3/2', '--out', 'p.json'], "--shard must be I/N, part I of N with 1 ≤ I ≤ N ≤ 100000 (e.g. 2/8), not '3/2'"],
    [['--shard', '0/4', '--out', 'p.json'], "not '0/4'"],
    [['--shard', 'x', '--out', 'p.json'], "not 'x'"],
    [['--shard', '1/4'], '--shard writes a part file: give it with --out FILE'],
    [['--subjects', '100001'], "--subjects must be a whole number from 1 to 100000, not '100001'"],
    [['--subjects', '2.5'], "not '2.5'"],
    [['--threads', '0'], '--threads must be a whole number from 1 to 256'],
    [['--format', 'xml'], "--format must be json, csv or text, not 'xml'"],
    [['--out', 'pop.json'], "refusing to write the output to '"],
  ])('population %j: exit 2 with one line', (options, message) => {
    const out = runCli(['population', 'pop.json', ...options], { folder: dir });
    expect(out.code).toBe(2);
    expect(out.stderr.split('\n')[0]).toContain(message);
    noStack(out.stderr);
  });
});

describe('csv and text', () => {
  it('text: settings, exposure percentiles, attainment as percentages ± SE, the best regimen marked, the caution', () => {
    const out = runCli(['population', 'pop.json', '--format', 'text'], { folder: dir });
    expect(out.code).toBe(0);
    const text = out.stdout;
    expect(text).toContain('Virtual population: 40 subjects, seed 424242');
    expect(text).toContain('weight: normal, mean 75 kg, SD 12 kg');
    expect(text).toContain('CL–V 0.3');
    expect(text).toMatch(/Exposure in central, steady state:\n\s+figure\s+p5\s+p50\s+p95\s+mean\s+unit\s+subjects/);
    // Attainment k of 40 and its binomial SE √(p(1−p)/N), both as percentages to 0.1 (Monte Carlo standard error, common practice).
    const row = /trough ≥ 8 mg\/L at steady state(?: \(central\))?\s+steady state\s+central\s+(\d+\.\d)% ± (\d+\.\d)%\s+(\d+) of 40/.exec(text);
    expect(row).not.toBeNull();
    const p = Number(row?.[3]) / 40;
    expect(Number(row?.[1])).toBeCloseTo(p * 100, 1);
    expect(Number(row?.[2])).toBeCloseTo(Math.sqrt((p * (1 - p)) / 40) * 100, 1);
    expect(text).toMatch(/^\*\s+\d+ mg every 12 h over 1 h/m);
    expect(text.trimEnd().endsWith('not dosing advice: follow local protocols, product labelling and licensed clinical judgement.')).toBe(true);
  });

  it('csv: one row per output time, band headers with the unit, observation bands with the residual error', () => {
    const out = runCli(['population', 'pop.json', '--format', 'csv'], { folder: dir });
    expect(out.code).toBe(0);
    const lines = out.stdout.trimEnd().split('\n');
    expect(lines[0]).toBe('time (h),central p5 (mg/L),central p50 (mg/L),central p95 (mg/L),central observed p5 (mg/L),central observed p50 (mg/L),central observed p95 (mg/L)');
    // 0 … 48 h every hour.
    expect(lines).toHaveLength(1 + 49);
    const at12 = lines[13].split(',').map(Number);
    expect(at12[0]).toBe(12);
    expect(at12[1]).toBeLessThanOrEqual(at12[2]);
    expect(at12[2]).toBeLessThanOrEqual(at12[3]);
  });
});

describe('covariate tables from CSV', () => {
  it('RFC 4180: quoted fields with commas, doubled quotes and line breaks, CRLF, a byte-order mark', () => {
    const split = splitCsv('\ufeffa,"b, c"\r\n"say ""hi""","two\nlines"\r\n');
    expect(split).toEqual({
      ok: true,
      records: [
        { fields: ['a', 'b, c'], quoted: [false, true], line: 1 },
        { fields: ['say "hi"', 'two\nlines'], quoted: [true, true], line: 2 },
      ],
    });
  });

  it('units in brackets make "64 kg", plain numbers stay numbers, words stay words', () => {
    const read = parseCovariateCsv('weight [kg],age,sex\n64,41,female\n"80.5", 3e1 ,male\n', 't.csv');
    expect(read).toEqual({ ok: true, rows: [{ weight: '64 kg', age: 41, sex: 'female' }, { weight: '80.5 kg', age: 30, sex: 'male' }] });
  });

  it('bad rows are reported with their line and column, every one of them', () => {
    const read = parseCovariateCsv('weight [kg],sex\n60,female\n6o,male\n70\n,female\n\n80,male\n', 'c.csv');
    expect(read).toEqual({
      ok: false,
      errors: [
        "c.csv line 3, column weight: '6o' is not a number (the column is in kg)",
        'c.csv line 4: 1 field where the header has 2 (weight, sex)',
        'c.csv line 5, column weight: the value is empty; every subject row needs every covariate',
        'c.csv line 6: an empty line where the header has 2 (weight, sex)',
      ],
    });
    expect(parseCovariateCsv('weight [kg],weight\n1,2\n', 'd.csv')).toEqual({ ok: false, errors: ['d.csv line 1, column weight: the name appears twice'] });
    expect(parseCovariateCsv('a,b\n1,"open\n', 'e.csv')).toEqual({ ok: false, errors: ['e.csv line 2: a quoted field is never closed'] });
  });

  it('a table file gives the same result as the same rows inline; a bad file names the line and column', () => {
    const csv = readFileSync(join(root, 'samples/halvorin-covariates.csv'), 'utf8');
    writeFileSync(join(dir, 'people.csv'), csv);
    const rows = parseCovariateCsv(csv, 'people.csv');
    expect(rows.ok).toBe(true);
    if (!rows.ok) return;
    expect(rows.rows).toHaveLength(12);
    expect(rows.rows[10]).toEqual({ weight: '61 kg', height: '159 cm', age: '71 year', sex: 'female', serumCreatinine: '0.95 mg/dL' });
    writeFileSync(join(dir, 'table-file.json'), JSON.stringify(scenario({ covariateTable: { file: 'people.csv', draw: 'at random' } })));
    writeFileSync(join(dir, 'table-rows.json'), JSON.stringify(scenario({ covariateTable: { rows: rows.rows, draw: 'at random' } })));
    const fromFile = runCli(['population', 'table-file.json', '--subjects', '20'], { folder: dir });
    const inline = runCli(['population', 'table-rows.json', '--subjects', '20'], { folder: dir });
    expect(fromFile.code, fromFile.stderr).toBe(0);
    expect(fromFile.stdout).toBe(inline.stdout);
    expect(JSON.parse(fromFile.stdout).settings.covariates).toEqual(['a table of 12 covariate rows, taken at random']);

    writeFileSync(join(dir, 'bad.csv'), 'weight [kg],sex\n60,female\nheavy,male\n');
    writeFileSync(join(dir, 'bad-table.json'), JSON.stringify(scenario({ covariateTable: { file: 'bad.csv' } })));
    const bad = runCli(['population', 'bad-table.json'], { folder: dir });
    expect(bad.code).toBe(1);
    expect(bad.stderr).toBe("bad.csv line 3, column weight: 'heavy' is not a number (the column is in kg)\n");
  });
});

describe('part arrays', () => {
  it('float64 values survive base64 of little-endian bytes exactly, NaN and signed zero included', () => {
    const values = Float64Array.from([0, -0, 1 / 3, Math.PI * 1e300, 5e-324, NaN, -Infinity]);
    const back = base64ToFloat64(float64ToBase64(values));
    expect(back && Array.from(back)).toEqual(Array.from(values));
    expect(Object.is(back?.[1], -0)).toBe(true);
    // 1.0 is 3FF0000000000000 (IEEE 754): little-endian, its bytes end in F0 3F.
    expect(Buffer.from(float64ToBase64(Float64Array.of(1)), 'base64').toString('hex')).toBe('000000000000f03f');
  });
});

describe('validate checks a population section', () => {
  it('a valid population is summarised; a population problem exits 1 with its path', () => {
    const ok = runCli(['validate', 'pop.json'], { folder: dir });
    expect(ok.code).toBe(0);
    expect(ok.stdout).toContain('a population of 40 with 2 varying quantities, 2 targets and 2 regimens');
    writeFileSync(join(dir, 'bad-pop.json'), JSON.stringify(scenario({ ...drawn, correlations: [{ between: ['CL', 'Vx'], value: 0.3 }] })));
    const bad = runCli(['validate', 'bad-pop.json'], { folder: dir });
    expect(bad.code).toBe(1);
    expect(bad.stderr).toContain("population.correlations[0].between[1]: no varying quantity is named 'Vx'");
    noStack(bad.stderr);
  });
});
