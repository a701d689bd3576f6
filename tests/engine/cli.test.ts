/**
 * The command line: runCli in-process for the content of each command, and real
 * subprocesses (`npx tsx server/cli.ts …`) for exit codes and the --out file.
 * Exit codes: 0 success, 1 invalid scenario or failed computation, 2 usage error.
 */
import { spawnSync } from 'node:child_process';
import { existsSync, linkSync, mkdirSync, mkdtempSync, readdirSync, readFileSync, rmSync, symlinkSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runCli } from '../../server/cli.ts';

const root = fileURLToPath(new URL('../../', import.meta.url));
const brennock = join(root, 'samples/brennock-oral-bid.json');
const merridune = join(root, 'samples/merridune-three-compartment-bolus.json');

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

/**
 * A linear model of n compartments in a ring with cross links, and `lines` dose lines each
 * repeated `count` times at intervals that differ from line to line, so that almost every
 * gap between breakpoints is new (a fictional stress case, not a drug).
 */
function slowScenario(n: number, lines: number, count: number) {
  const compartments = Array.from({ length: n }, (_, i) => ({ id: `c${i}`, volume: `${5 + i} L` }));
  const transfers: { from: string; to?: string; k: string }[] = [];
  for (let i = 0; i < n; i++) {
    transfers.push({ from: `c${i}`, to: `c${(i + 1) % n}`, k: `${0.3 + 0.01 * i} 1/h` });
    transfers.push({ from: `c${i}`, to: `c${(i + 7) % n}`, k: `${0.05 + 0.002 * i} 1/h` });
  }
  transfers.push({ from: 'c0', k: '0.2 1/h' });
  const doses = Array.from({ length: lines }, (_, j) => ({ into: `c${j % n}`, amount: '10 mg', at: `${j * 0.0137} h`, every: `${1 + j * 0.001234567} h`, count }));
  return { title: 'Fictional stress case', compartments, transfers, doses, output: { end: `${count * 2.3} h`, step: '10 h' } };
}

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
    const out = runCli(['simulate', brennock]);
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
    const json = JSON.parse(runCli(['simulate', brennock]).stdout);
    const out = runCli(['simulate', brennock, '--format', 'csv']);
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
    expect(runCli(['simulate', merridune, '--format=csv']).stdout).toBe(runCli(['simulate', merridune, '--format', 'csv']).stdout);
  });

  it('--out returns the text to write instead of printing it', () => {
    const target = join(dir, 'in-process.json');
    const out = runCli(['simulate', brennock, '--out', target]);
    expect(out.code).toBe(0);
    expect(out.stdout).toBe('');
    expect(out.stderr).toContain(`wrote result to ${target}`);
    expect(out.file?.path).toBe(target);
    expect(JSON.parse(out.file?.text ?? '').times).toEqual(JSON.parse(runCli(['simulate', brennock]).stdout).times);
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
    const out = runCli(['validate', brennock]);
    expect(out.code).toBe(0);
    expect(out.stdout).toBe(`${brennock}: valid — 2 compartments, 2 transfers, 14 administrations, linear model\n`);
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
    const sample = JSON.parse(readFileSync(brennock, 'utf8'));
    for (const key of Object.keys(sample)) expect(schema.properties).toHaveProperty(key);
    expect(schema.additionalProperties).toBe(false);
  });
});

describe('usage errors exit 2', () => {
  it('unknown command', () => {
    const out = runCli(['simulat', brennock]);
    expect(out.code).toBe(2);
    expect(out.stderr).toMatch(/^unknown command 'simulat'/);
    expect(out.stderr).toContain('usage:');
  });

  it('bad --format', () => {
    const out = runCli(['simulate', brennock, '--format', 'xml']);
    expect(out.code).toBe(2);
    expect(out.stderr).toMatch(/--format must be .*not 'xml'/);
    expect(out.stdout).toBe('');
  });

  it('unknown option', () => {
    const out = runCli(['simulate', brennock, '--fromat', 'csv']);
    expect(out.code).toBe(2);
    expect(out.stderr).toMatch(/unknown option --fromat/);
  });

  it('option without a value', () => {
    const out = runCli(['simulate', brennock, '--format']);
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

describe('the output never replaces an input', () => {
  // Reproduces: `simulate victim.json --format csv --out victim.json` replaced the scenario with CSV and exited 0.
  let victim: string;
  let original: Buffer;
  beforeAll(() => {
    mkdirSync(join(dir, 'inputs'), { recursive: true });
    victim = join(dir, 'inputs', 'victim.json');
    writeFileSync(victim, readFileSync(brennock));
    original = readFileSync(victim);
  });

  const refused = (out: ReturnType<typeof runCli>, outPath: string, inputPath: string, role: string) => {
    expect(out.code).toBe(2);
    expect(out.file).toBeUndefined();
    expect(out.binaryFile).toBeUndefined();
    expect(out.stdout).toBe('');
    // Names both: the output as given and the input it would overwrite.
    expect(out.stderr.split('\n')[0]).toBe(`refusing to write the output to '${outPath}': it is the same file as the ${role} '${inputPath}'`);
    expect(readFileSync(victim).equals(original)).toBe(true);
  };

  it('simulate --out naming the scenario itself exits 2 and writes nothing', () => {
    refused(runCli(['simulate', victim, '--format', 'csv', '--out', victim]), victim, victim, 'scenario file');
  });

  it('the same file under another spelling, through a symbolic link, or as a hard link is refused too', () => {
    const spelled = join(dir, 'inputs', '..', 'inputs', '.', 'victim.json');
    refused(runCli(['simulate', victim, '--out', spelled]), spelled, victim, 'scenario file');
    const link = join(dir, 'link-to-victim.json');
    symlinkSync(victim, link);
    refused(runCli(['simulate', victim, '--out', link]), link, victim, 'scenario file');
    refused(runCli(['simulate', link, '--out', victim]), victim, link, 'scenario file');
    const hard = join(dir, 'hard-victim.json');
    linkSync(victim, hard);
    refused(runCli(['simulate', victim, '--format', 'text', '--out', hard]), hard, victim, 'scenario file');
    // A link inside a linked folder: realpath resolves both levels.
    const folderLink = join(dir, 'inputs-link');
    symlinkSync(join(dir, 'inputs'), folderLink);
    refused(runCli(['report', victim, '--out', join(folderLink, 'victim.json')]), join(folderLink, 'victim.json'), victim, 'scenario file');
  });

  it('report --out naming the --reference file is refused', () => {
    refused(runCli(['report', brennock, '--reference', victim, '--out', victim]), victim, victim, 'reference file');
  });

  it('an output beside the input, not the same file, is written as before', () => {
    const out = runCli(['simulate', victim, '--format', 'csv', '--out', join(dir, 'inputs', 'victim.csv')]);
    expect(out.code).toBe(0);
    expect(out.file?.path).toBe(join(dir, 'inputs', 'victim.csv'));
  });
});

describe('control characters in user text reach the terminal as visible escapes', () => {
  // Reproduces: a title with ANSI escapes was printed raw by --format text (the screen cleared, the text turned red).
  const hostileTitle = 'Fictional \u001b[2J\u001b[31mred\u0007 \u009b1m title';
  let titled: string;
  let belled: string;
  let unitFile: string;
  beforeAll(() => {
    titled = join(dir, 'hostile-title.json');
    writeFileSync(titled, JSON.stringify({ ...JSON.parse(readFileSync(brennock, 'utf8')), title: hostileTitle }));
    belled = join(dir, 'hostile-id.json');
    writeFileSync(
      belled,
      JSON.stringify({
        title: 'Fictional',
        compartments: [{ id: 'cen\u0007tral', volume: 12 }, { id: 'tissue', volume: 30, 'bogus\u0007key\nline': 1 }],
        doses: [{ into: 'tissue', amount: 100, 'sound\u0007': true }],
        output: { end: 24 },
      }),
    );
    unitFile = join(dir, 'hostile-unit.json');
    writeFileSync(unitFile, JSON.stringify({ ...invalidScenario, compartments: [{ id: 'central', volume: '12 L\u0007\u001b[31m' }, { id: 'tissue', volume: 30 }] }));
  });
  const noControls = (text: string) => expect(text).not.toMatch(/[\u0000-\u0009\u000b-\u001f\u007f-\u009f]/);

  it('--format text shows the title with \\u001b escapes and no raw control character', () => {
    const out = runCli(['simulate', titled, '--format', 'text']);
    expect(out.code).toBe(0);
    noControls(out.stdout);
    noControls(out.stderr);
    expect(out.stdout.split('\n')[0]).toBe('Fictional \\u001b[2J\\u001b[31mred\\u0007 \\u009b1m title');
  });

  it('JSON on stdout stays valid JSON holding the same title', () => {
    const out = runCli(['simulate', titled]);
    expect(out.code).toBe(0);
    noControls(out.stdout);
    expect(JSON.parse(out.stdout).title).toBe(hostileTitle);
  });

  it('validate: a compartment id with a BEL, a key with a newline and a unit with ANSI escapes are shown escaped, one line each', () => {
    // The id is refused by its pattern without being echoed; the unknown key and the unit are echoed (raw, before).
    const out = runCli(['validate', belled]);
    expect(out.code).toBe(1);
    noControls(out.stderr);
    const lines = out.stderr.trimEnd().split('\n');
    expect(lines).toEqual([
      `${belled}: the scenario has 3 problems:`,
      expect.stringMatching(/^compartments\[0\]\.id: must start with a letter/),
      "compartments[1]: unknown field 'bogus\\u0007key\\u000aline'",
      "doses[0]: unknown field 'sound\\u0007'",
    ]);
    const echoed = runCli(['validate', unitFile]);
    expect(echoed.code).toBe(1);
    noControls(echoed.stderr);
    expect(echoed.stderr).toContain("compartments[0].volume: could not read the unit 'L\\u0007\\u001b[31m' in '12 L\\u0007\\u001b[31m'");
  });

  it('a file name with an escape in it is shown escaped', () => {
    const named = join(dir, 'odd\u001b[31mname.json');
    writeFileSync(named, '{');
    const out = runCli(['simulate', named]);
    expect(out.code).toBe(2);
    noControls(out.stderr);
    expect(out.stderr).toContain('odd\\u001b[31mname.json');
  });
});

describe('--time-limit', () => {
  it('accepts seconds, 0 for none; anything else is a usage error', () => {
    for (const bad of ['-1', 'abc', '1e999', '', '5s']) {
      const out = runCli(['simulate', brennock, '--time-limit', bad]);
      expect(out.code, bad).toBe(2);
      expect(out.stderr).toMatch(/^--time-limit must be a number of seconds \(0 for none\)/);
    }
    expect(runCli(['simulate', brennock, '--time-limit', '0', '--format', 'csv']).code).toBe(0);
    expect(runCli(['report', brennock, '--time-limit=2.5', '--out', join(dir, 'limit.pdf')]).code).toBe(0);
    expect(runCli(['validate', brennock, '--time-limit', '3']).code).toBe(2); // validate has no computation to bound
  });
});

describe('as a real process', () => {
  // Three runs, one per exit code: each starts npx and tsx (seconds on two cores); the timeout only guards against a hang.
  const cli = (...args: string[]) =>
    spawnSync('npx', ['tsx', 'server/cli.ts', ...args], { cwd: root, encoding: 'utf8', timeout: 120_000 });

  it('simulate --format csv --out FILE exits 0 and writes the file', () => {
    const target = join(dir, 'brennock.csv');
    const run = cli('simulate', 'samples/brennock-oral-bid.json', '--format', 'csv', '--out', target);
    expect(run.error).toBeUndefined();
    expect(run.status).toBe(0);
    expect(run.stdout).toBe('');
    expect(run.stderr).toContain(`wrote result to ${target}`);
    expect(existsSync(target)).toBe(true);
    expect(readFileSync(target, 'utf8')).toBe(runCli(['simulate', brennock, '--format', 'csv']).stdout);
  });

  it('validate of an invalid scenario exits 1 with path lines on stderr', () => {
    const run = cli('validate', invalidFile);
    expect(run.status).toBe(1);
    expect(run.stderr).toMatch(/^doses\[0\]\.into: no compartment named 'tisue'/m);
    noStack(run.stderr);
  });

  it('--out naming the scenario file exits 2 and leaves the scenario byte-identical', () => {
    const victim = join(dir, 'process-victim.json');
    writeFileSync(victim, readFileSync(brennock));
    const before = readFileSync(victim);
    const run = cli('simulate', victim, '--format', 'csv', '--out', victim);
    expect(run.status).toBe(2);
    expect(run.stderr).toContain(`refusing to write the output to '${victim}': it is the same file as the scenario file '${victim}'`);
    expect(readFileSync(victim).equals(before)).toBe(true);
  });

  it('a write that fails part-way (file size limit, as a full disk) exits 1 and leaves the previous file byte-identical', () => {
    // Reproduces: with a full disk, an existing prev.pdf was replaced by a truncated, invalid file.
    // `ulimit -f 16` makes every write past 16 KiB fail with EFBIG (node ignores SIGXFSZ), as
    // ENOSPC would on a full disk; the report is larger than that. tsx's cache files are smaller.
    const folder = join(dir, 'full');
    mkdirSync(folder);
    const prev = join(folder, 'prev.pdf');
    writeFileSync(prev, '%PDF-1.3 the previous report, kept whole\n'.repeat(10));
    const before = readFileSync(prev);
    const run = spawnSync('bash', ['-c', 'ulimit -f 16 && exec node --import tsx server/cli.ts report "$1" --out "$2"', 'bash', brennock, prev], {
      cwd: root,
      encoding: 'utf8',
      timeout: 120_000,
    });
    expect(run.status).toBe(1);
    expect(run.stderr).toMatch(/^cannot write '.*prev\.pdf': the file would exceed the size limit \(EFBIG\); the existing file was left unchanged/m);
    expect(run.stderr).not.toContain('wrote');
    noStack(run.stderr);
    expect(readFileSync(prev).equals(before)).toBe(true);
    expect(readdirSync(folder)).toEqual(['prev.pdf']); // the temporary file was removed
  });

  it('--time-limit stops a long computation: exit 1 with what to change', () => {
    // 40 compartments and 20,000 administrations at distinct intervals: every breakpoint needs
    // its own 81×81 matrix exponential, about 7 ms each here, so the run takes minutes without a
    // limit (10,000 administrations took 74 s) while its memory stays bounded.
    const slow = join(dir, 'slow.json');
    writeFileSync(slow, JSON.stringify(slowScenario(40, 200, 100)));
    const started = Date.now();
    const run = spawnSync('node', ['--import', 'tsx', 'server/cli.ts', 'simulate', slow, '--format', 'text', '--time-limit', '1'], {
      cwd: root,
      encoding: 'utf8',
      // The generous bound: start-up (seconds on two busy cores) plus the 1 s limit; the run itself takes minutes.
      timeout: 60_000,
      killSignal: 'SIGKILL',
    });
    const seconds = (Date.now() - started) / 1000;
    expect(run.error, `still running after ${seconds} s`).toBeUndefined();
    expect(run.status).toBe(1);
    expect(run.stdout).toBe('');
    expect(run.stderr).toMatch(/^the computation took longer than the time limit of 1 s and was stopped; /);
    expect(run.stderr).toContain('--time-limit');
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
