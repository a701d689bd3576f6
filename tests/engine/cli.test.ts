/**
 * The command line: runCli in-process for the content of each command, and real
 * subprocesses (`npx tsx server/cli.ts …`) for exit codes and the --out file.
 * Exit codes: 0 success, 1 invalid scenario or failed computation, 2 usage error.
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runCli } from '../../server/cli.ts';

const root = fileURLToPath(new URL('../../', import.meta.url));
const velarin = join(root, 'samples/velarin-oral-bid.json');
const tessamide = join(root, 'samples/tessamide-three-compartment-bolus.json');

let dir: string;
let invalidFile: string;
let brokenJsonFile: string;

const invalidScenario = {
  title: 'Fictional compound with two mistakes',
  compartments: [{ id: 'central', volume: 12 }, { id: 'tissue', volume: 30 }],
  transfers: [{ from: 'central', cl: '3 mg' }],
  doses: [{ into: 'tisue', amount: 100 }],
  output: { end: 24 },
};

beforeAll(() => {
  dir = mkdtempSync(join(tmpdir(), 'tidemark-cli-'));
  invalidFile = join(dir, 'invalid.json');
  writeFileSync(invalidFile, JSON.stringify(invalidScenario));
  brokenJsonFile = join(dir, 'broken.json');
  writeFileSync(brokenJsonFile, '{ "title": "Fictional", "compartments": [ ');
});

afterAll(() => {
  rmSync(dir, { recursive: true, force: true });
});

const noStack = (text: string) => {
  expect(text).not.toContain('    at ');
  expect(text).not.toMatch(/\.ts:\d+/);
};

describe('simulate', () => {
  it('prints the result as JSON: times, amounts, concentrations (null for the depot), metrics, diagnostics, units', () => {
    const out = runCli(['simulate', velarin]);
    expect(out.code).toBe(0);
    expect(out.stderr).toBe(''); // the sample gives no warnings
    const r = JSON.parse(out.stdout);
    expect(Array.isArray(r.times)).toBe(true);
    const n = r.times.length;
    expect(n).toBeGreaterThan(672); // 7 days at 15 min is 673 grid times, plus the dose rows
    expect(r.times[0]).toBe(0);
    expect(r.times[n - 1]).toBe(168);
    expect(Object.keys(r.compartments)).toEqual(['gut', 'central']);
    expect(r.compartments.gut.amount).toHaveLength(n);
    expect(r.compartments.gut.concentration).toBeNull();
    expect(r.compartments.central.amount).toHaveLength(n);
    expect(r.compartments.central.concentration).toHaveLength(n);
    expect(r.compartments.central.volume).toBe(42);
    // Concentration = amount / volume, value by value (one division each).
    r.compartments.central.amount.forEach((a: number, i: number) => {
      expect(r.compartments.central.concentration[i]).toBeCloseTo(a / 42, 12);
    });
    expect(r.metrics.compartments.central.overall.cmax).toBeGreaterThan(0);
    expect(r.metrics.compartments.central.intervals).toHaveLength(14);
    expect(r.metrics.compartments.gut).toBeUndefined(); // no volume, no concentration figures
    expect(r.diagnostics.path).toBe('exact');
    expect(r.diagnostics.massBalance.relativeError).toBeLessThan(1e-12);
    expect(r.units).toMatchObject({ amount: 'mg', volume: 'L', time: 'h', concentration: 'mg/L' });
  });

  it('prints CSV with one header and one row per reported time', () => {
    const json = JSON.parse(runCli(['simulate', velarin]).stdout);
    const out = runCli(['simulate', velarin, '--format', 'csv']);
    expect(out.code).toBe(0);
    const lines = out.stdout.trimEnd().split('\n');
    expect(lines).toHaveLength(json.times.length + 1);
    expect(lines[0]).toBe('time (h),gut amount (mg),central amount (mg),central concentration (mg/L)');
    lines.slice(1).forEach((line, i) => {
      const cells = line.split(',').map(Number);
      expect(cells).toHaveLength(4);
      expect(cells[0]).toBe(json.times[i]);
      expect(cells[2]).toBe(json.compartments.central.amount[i]); // String(x) round-trips a double exactly
      expect(cells[3]).toBe(json.compartments.central.concentration[i]);
    });
  });

  it('--format=csv (inline value) works the same', () => {
    expect(runCli(['simulate', tessamide, '--format=csv']).stdout).toBe(runCli(['simulate', tessamide, '--format', 'csv']).stdout);
  });

  it('--out returns the text to write instead of printing it', () => {
    const target = join(dir, 'in-process.json');
    const out = runCli(['simulate', velarin, '--out', target]);
    expect(out.code).toBe(0);
    expect(out.stdout).toBe('');
    expect(out.stderr).toContain(`wrote ${target}`);
    expect(out.file?.path).toBe(target);
    expect(JSON.parse(out.file?.text ?? '').times).toEqual(JSON.parse(runCli(['simulate', velarin]).stdout).times);
  });

  it('an invalid scenario exits 1 with one "path: message" line per problem', () => {
    const out = runCli(['simulate', invalidFile]);
    expect(out.code).toBe(1);
    expect(out.stdout).toBe('');
    const lines = out.stderr.trimEnd().split('\n');
    expect(lines[0]).toBe(`${invalidFile}: the scenario has 2 problems:`);
    expect(lines.slice(1).sort()).toEqual([
      "doses[0].into: no compartment named 'tisue' (compartments are 'central', 'tissue')",
      "transfers[0].cl: expected a volume/time unit (e.g. L/h), got 'mg'",
    ]);
    noStack(out.stderr);
  });
});

describe('validate', () => {
  it('a valid scenario exits 0 with a one-line summary', () => {
    const out = runCli(['validate', velarin]);
    expect(out.code).toBe(0);
    expect(out.stdout).toBe(`${velarin}: valid — 2 compartments, 2 transfers, 14 administrations, linear model\n`);
    expect(out.stderr).toBe('');
  });

  it('an invalid scenario exits 1 with the path of each problem on stderr', () => {
    const out = runCli(['validate', invalidFile]);
    expect(out.code).toBe(1);
    expect(out.stdout).toBe('');
    expect(out.stderr).toMatch(/^doses\[0\]\.into: no compartment named 'tisue'/m);
    expect(out.stderr).toMatch(/^transfers\[0\]\.cl: expected a volume\/time unit/m);
    noStack(out.stderr);
  });
});

describe('schema', () => {
  it('prints a JSON Schema object describing the scenario format', () => {
    const out = runCli(['schema']);
    expect(out.code).toBe(0);
    const schema = JSON.parse(out.stdout);
    expect(schema.$schema).toMatch(/json-schema\.org/);
    expect(schema.type).toBe('object');
    for (const key of ['title', 'units', 'compartments', 'transfers', 'doses', 'output', 'solver']) {
      expect(schema.properties, key).toHaveProperty(key);
    }
    expect(schema.required).toEqual(expect.arrayContaining(['title', 'compartments', 'output']));
    expect(schema.properties.compartments.type).toBe('array');
    expect(schema.properties.doses.items.properties).toHaveProperty('into');
    expect(schema.properties.doses.items.properties).toHaveProperty('bioavailability');
    expect(schema.properties.solver.properties.method.enum).toEqual(expect.arrayContaining(['auto', 'exact', 'dop853', 'rk4']));
    // Every key the samples use is described by the schema (unknown keys are rejected).
    const sample = JSON.parse(readFileSync(velarin, 'utf8'));
    for (const key of Object.keys(sample)) expect(schema.properties).toHaveProperty(key);
    expect(schema.additionalProperties).toBe(false);
  });
});

describe('usage errors exit 2', () => {
  it('unknown command', () => {
    const out = runCli(['simulat', velarin]);
    expect(out.code).toBe(2);
    expect(out.stderr).toMatch(/^unknown command 'simulat'/);
    expect(out.stderr).toContain('usage:');
  });

  it('bad --format', () => {
    const out = runCli(['simulate', velarin, '--format', 'xml']);
    expect(out.code).toBe(2);
    expect(out.stderr).toMatch(/--format must be .*not 'xml'/);
    expect(out.stdout).toBe('');
  });

  it('unknown option', () => {
    const out = runCli(['simulate', velarin, '--fromat', 'csv']);
    expect(out.code).toBe(2);
    expect(out.stderr).toMatch(/unknown option --fromat/);
  });

  it('option without a value', () => {
    const out = runCli(['simulate', velarin, '--format']);
    expect(out.code).toBe(2);
    expect(out.stderr).toMatch(/--format needs a value/);
  });

  it('no command at all prints the usage', () => {
    const out = runCli([]);
    expect(out.code).toBe(2);
    expect(out.stderr).toContain('usage:');
  });

  it('missing file: a clean message, no stack', () => {
    const missing = join(dir, 'no-such-scenario.json');
    for (const command of ['simulate', 'validate']) {
      const out = runCli([command, missing]);
      expect(out.code).toBe(2);
      expect(out.stderr.split('\n')[0]).toBe(`cannot read '${missing}': no such file`);
      noStack(out.stderr);
    }
  });

  it('no file given', () => {
    const out = runCli(['validate']);
    expect(out.code).toBe(2);
    expect(out.stderr).toMatch(/a scenario FILE is required/);
  });

  it('a file that is not JSON: names the file and the parse error, no stack', () => {
    const out = runCli(['simulate', brokenJsonFile]);
    expect(out.code).toBe(2);
    expect(out.stderr.split('\n')[0]).toMatch(new RegExp(`^'${brokenJsonFile.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}' is not valid JSON: `));
    noStack(out.stderr);
  });
});

describe('as a real process', () => {
  // Three runs, one per exit code: each starts npx and tsx (seconds on two cores); the timeout only guards against a hang.
  const cli = (...args: string[]) =>
    spawnSync('npx', ['tsx', 'server/cli.ts', ...args], { cwd: root, encoding: 'utf8', timeout: 120_000 });

  it('simulate --format csv --out FILE exits 0 and writes the file', () => {
    const target = join(dir, 'velarin.csv');
    const run = cli('simulate', 'samples/velarin-oral-bid.json', '--format', 'csv', '--out', target);
    expect(run.error).toBeUndefined();
    expect(run.status).toBe(0);
    expect(run.stdout).toBe('');
    expect(run.stderr).toContain(`wrote ${target}`);
    expect(existsSync(target)).toBe(true);
    expect(readFileSync(target, 'utf8')).toBe(runCli(['simulate', velarin, '--format', 'csv']).stdout);
  });

  it('validate of an invalid scenario exits 1 with path lines on stderr', () => {
    const run = cli('validate', invalidFile);
    expect(run.status).toBe(1);
    expect(run.stderr).toMatch(/^doses\[0\]\.into: no compartment named 'tisue'/m);
    noStack(run.stderr);
  });

  it('a missing file exits 2 without a stack trace', () => {
    const missing = cli('simulate', join(dir, 'absent.json'));
    expect(missing.status).toBe(2);
    expect(missing.stdout).toBe('');
    expect(missing.stderr).toMatch(/^cannot read '.*absent\.json': no such file/);
    noStack(missing.stderr);
  });
});
