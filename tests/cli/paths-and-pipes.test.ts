/**
 * The command line as a user runs it: paths are read from the folder the user is in (also
 * through `npm run cli`, which starts the program in the repository root), the written file
 * is named with its absolute path, and output piped into a program that stops reading
 * early ends quietly.
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runCli } from '../../server/cli.ts';
import { fromUserFolder, userFolder } from '../../server/user-folder.ts';

const root = fileURLToPath(new URL('../../', import.meta.url)).replace(/\/$/, '');
const samples = join(root, 'samples');

/** A fictional one-compartment oral regimen, written by the test itself. */
const scenario = (step: string) => ({
  title: 'Fictional oral regimen for the path checks',
  compartments: [{ id: 'gut' }, { id: 'central', volume: '40 L' }],
  transfers: [
    { from: 'gut', to: 'central', k: '1 1/h' },
    { from: 'central', cl: '4 L/h' },
  ],
  doses: [{ into: 'gut', amount: '300 mg', every: '12 h', count: 6 }],
  output: { end: '72 h', step },
});

/** The environment of the test run without what an outer `npm test` passed down. */
function cleanEnv(): NodeJS.ProcessEnv {
  const env = { ...process.env };
  for (const key of Object.keys(env)) if (key === 'INIT_CWD' || key.startsWith('npm_')) delete env[key];
  return env;
}

const noStack = (text: string) => {
  expect(text).not.toContain('    at ');
  expect(text).not.toMatch(/EPIPE|Unhandled/);
};

let dir: string;

beforeAll(() => {
  dir = mkdtempSync(join(tmpdir(), 'tidemark-paths-'));
  writeFileSync(join(dir, 'regimen.json'), JSON.stringify(scenario('1 h')));
  // About 4,300 rows: megabytes of JSON, far more than a pipe holds (64 KiB), so a reader that
  // stops after one line leaves most of it unwritable.
  writeFileSync(join(dir, 'fine.json'), JSON.stringify(scenario('1 min')));
});

afterAll(() => {
  rmSync(dir, { recursive: true, force: true });
});

describe('the user folder', () => {
  it('is INIT_CWD when npm started the program in the package folder', () => {
    const env = { INIT_CWD: '/home/u/work', npm_package_json: '/repo/package.json' };
    expect(userFolder(env, '/repo')).toBe('/home/u/work');
  });

  it('is the current folder when not run through npm, or when INIT_CWD was only inherited', () => {
    expect(userFolder({}, '/home/u/work')).toBe('/home/u/work');
    // A program started by something an npm script started, in another folder.
    expect(userFolder({ INIT_CWD: '/repo', npm_package_json: '/repo/package.json' }, '/tmp/elsewhere')).toBe('/tmp/elsewhere');
    // INIT_CWD without npm's package path is not npm's doing.
    expect(userFolder({ INIT_CWD: '/somewhere' }, '/home/u')).toBe('/home/u');
  });

  it('relative paths are read from it, absolute paths as given', () => {
    expect(fromUserFolder('/home/u/work', 'a.json')).toBe('/home/u/work/a.json');
    expect(fromUserFolder('/home/u/work', '../b/a.json')).toBe('/home/u/b/a.json');
    expect(fromUserFolder('/home/u/work', '/abs/a.json')).toBe('/abs/a.json');
  });
});

describe('runCli reads and writes relative to the folder it is given', () => {
  it('validate and simulate read a relative scenario path from the folder', () => {
    expect(runCli(['validate', 'regimen.json'], { folder: dir }).code).toBe(0);
    const out = runCli(['simulate', 'regimen.json', '--format', 'csv', '--out', 'result.csv'], { folder: dir });
    expect(out.code).toBe(0);
    expect(out.file?.path).toBe(join(dir, 'result.csv'));
    expect(out.stderr).toContain(`wrote result to ${join(dir, 'result.csv')}`);
  });

  it('a report without --out is placed in the folder and named with its absolute path', () => {
    const out = runCli(['report', 'regimen.json'], { folder: dir });
    expect(out.code).toBe(0);
    expect(out.binaryFile?.path.startsWith(`${dir}/tidemark-`)).toBe(true);
    expect(out.stderr).toMatch(new RegExp(`^wrote report to ${dir.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}/tidemark-.*\\.pdf \\(`));
  });

  it('a missing relative file is reported with where it was looked for', () => {
    const out = runCli(['validate', 'absent.json'], { folder: dir });
    expect(out.code).toBe(2);
    expect(out.stderr.split('\n')[0]).toBe(`cannot read '${join(dir, 'absent.json')}': no such file`);
  });
});

describe('as a real process', () => {
  // Each run starts npm (or node) and the TypeScript loader: seconds on two busy cores; the timeout only guards against a hang.
  it('`cd samples && npm run -s cli -- validate FILE` reads the file in samples', () => {
    const sample = readdirSync(samples).find((f) => f.endsWith('.json'));
    expect(sample).toBeDefined();
    const run = spawnSync('npm', ['run', '-s', 'cli', '--', 'validate', sample as string], { cwd: samples, env: cleanEnv(), encoding: 'utf8', timeout: 120_000 });
    expect(run.stderr).toBe('');
    expect(run.status).toBe(0);
    expect(run.stdout).toContain(`${sample}: valid`);
  });

  it('a report without --out lands in the folder npm was started from, not in the repository root', () => {
    const before = new Set(readdirSync(root));
    // --time-limit 0 computes in the main thread: this is about where the file lands, not the worker.
    const run = spawnSync('npm', ['--prefix', root, 'run', '-s', 'cli', '--', 'report', 'regimen.json', '--time-limit', '0'], {
      cwd: dir,
      env: cleanEnv(),
      encoding: 'utf8',
      timeout: 120_000,
    });
    expect(run.status).toBe(0);
    const written = readdirSync(dir).filter((f) => f.endsWith('.pdf'));
    expect(written).toHaveLength(1);
    expect(readdirSync(root).filter((f) => !before.has(f) && f.endsWith('.pdf'))).toEqual([]);
    expect(run.stderr).toContain(`wrote report to ${join(dir, written[0])} (`);
    expect(readFileSync(join(dir, written[0])).subarray(0, 5).toString('latin1')).toBe('%PDF-');
  });

  it('run with node in another folder, an inherited INIT_CWD does not move the paths', () => {
    const loader = join(root, 'node_modules/tsx/dist/loader.mjs');
    const run = spawnSync('node', ['--import', `file://${loader}`, join(root, 'server/cli.ts'), 'simulate', 'regimen.json', '--format', 'csv', '--out', 'here.csv'], {
      cwd: dir,
      env: { ...cleanEnv(), INIT_CWD: root, npm_package_json: join(root, 'package.json') },
      encoding: 'utf8',
      timeout: 120_000,
    });
    expect(run.status).toBe(0);
    expect(existsSync(join(dir, 'here.csv'))).toBe(true);
    expect(run.stderr).toContain(`wrote result to ${join(dir, 'here.csv')}`);
  });
});

describe('output piped into a program that stops reading', () => {
  /** Runs `cli … | reader` in bash and returns the command line's own status and stderr. */
  function piped(args: string[], reader: string) {
    const errors = join(dir, `stderr-${Math.random().toString(36).slice(2)}.txt`);
    const command = `node --import tsx server/cli.ts "$@" 2>"${errors}" | ${reader} >/dev/null; echo "\${PIPESTATUS[0]}"`;
    const run = spawnSync('bash', ['-c', command, 'bash', ...args], { cwd: root, env: cleanEnv(), encoding: 'utf8', timeout: 120_000 });
    return { status: Number(run.stdout.trim()), stderr: readFileSync(errors, 'utf8') };
  }

  it('`simulate --format json | head -n 1` exits 0 without an EPIPE trace', () => {
    // head reads at most a pipe's worth and exits after the first line; megabytes remain to be written.
    const run = piped(['simulate', join(dir, 'fine.json'), '--format', 'json'], 'head -n 1');
    noStack(run.stderr);
    expect(run.stderr).toBe('');
    expect(run.status).toBe(0);
  });

  it('a reader that exits before anything is written: exit 0, nothing on stderr', () => {
    // `true` exits at once, long before the program has loaded: every write finds the pipe closed.
    const run = piped(['simulate', join(dir, 'regimen.json'), '--format', 'csv'], 'true');
    noStack(run.stderr);
    expect(run.stderr).toBe('');
    expect(run.status).toBe(0);
  });

  it('a failing command keeps its own status when its output pipe is closed', () => {
    const run = piped(['simulate', join(dir, 'absent.json')], 'true');
    expect(run.status).toBe(2);
    expect(run.stderr).toMatch(/^cannot read '.*absent\.json': no such file/);
  });
});
