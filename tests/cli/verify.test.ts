/**
 * `tidemark verify`: the installation check passes here, prints every case with its source,
 * expected and computed value, tolerance and verdict, fails loudly when a case is wrong, and
 * writes its record as JSON.
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runCli } from '../../server/cli.ts';
import { integratedMichaelisMenten, referenceCases, type ReferenceCase } from '../../server/verify/cases.ts';
import { runCase } from '../../server/verify/run.ts';

const root = fileURLToPath(new URL('../../', import.meta.url));
const pkg = JSON.parse(readFileSync(join(root, 'package.json'), 'utf8')) as { version: string };

let dir: string;
beforeAll(() => {
  dir = mkdtempSync(join(tmpdir(), 'tidemark-verify-'));
});
afterAll(() => {
  rmSync(dir, { recursive: true, force: true });
});

/** The case with its expected values moved by a factor: what a wrong engine would look like to the check. */
function perturbed(c: ReferenceCase, factor: number): ReferenceCase {
  return {
    ...c,
    run: () => {
      const outcome = c.run();
      return outcome.ok ? { ok: true, points: outcome.points.map((p) => ({ ...p, expected: p.expected * factor })) } : outcome;
    },
  };
}

describe('the reference cases', () => {
  it('cover the closed forms and the independent library the brief names, each with a source and a tolerance', () => {
    const ids = referenceCases.map((c) => c.id);
    expect(ids).toEqual(
      expect.arrayContaining([
        'iv-bolus-curve',
        'iv-bolus-auc',
        'oral-bateman',
        'repeated-bolus-peak',
        'repeated-bolus-trough',
        'infusion-css',
        'two-compartment-biexponential',
        'michaelis-menten-bolus',
        'michaelis-menten-infusion-css',
        'time-to-90',
        'two-compartment-mathjs-expm',
      ]),
    );
    expect(new Set(ids).size).toBe(ids.length);
    for (const c of referenceCases) {
      expect(c.source.length, c.id).toBeGreaterThan(0);
      expect(c.tolerance, c.id).toBeGreaterThan(0);
      expect(c.tolerance, c.id).toBeLessThanOrEqual(1e-8);
    }
  });

  it('the bisection solves the integrated Michaelis–Menten equation to rounding', () => {
    // t = (C0 − C)/(Vmax/V) + (Km/(Vmax/V))·ln(C0/C) (Wagner 1975): put a C in, get the t, solve back.
    const [c0, vm, km] = [20, 1.5, 4];
    for (const c of [19.9, 10, 4, 1, 1e-3]) {
      const t = (c0 - c) / vm + (km / vm) * Math.log(c0 / c);
      expect(Math.abs(integratedMichaelisMenten(t, c0, vm, km) - c) / c).toBeLessThan(1e-12);
    }
  });

  it('a case whose expected value is off by 1e-6 fails, one off by less than its tolerance passes', () => {
    const c = referenceCases.find((x) => x.id === 'iv-bolus-curve') as ReferenceCase;
    expect(runCase(c).verdict).toBe('pass');
    const broken = runCase(perturbed(c, 1 + 1e-6));
    expect(broken.verdict).toBe('FAIL');
    expect(broken.error as number).toBeGreaterThan(0.9e-6);
    expect(runCase(perturbed(c, 1 + 1e-14)).verdict).toBe('pass');
  });

  it('a case the engine rejects, one that throws, and a NaN all fail with the reason', () => {
    const base = { id: 'x', name: 'x', source: 'test', tolerance: 1e-12 };
    expect(runCase({ ...base, run: () => ({ ok: false, reason: 'scenario rejected: doses[0]: …' }) })).toMatchObject({ verdict: 'FAIL', reason: 'scenario rejected: doses[0]: …' });
    expect(
      runCase({
        ...base,
        run: () => {
          throw new Error('boom');
        },
      }),
    ).toMatchObject({ verdict: 'FAIL', reason: 'internal error: boom' });
    expect(runCase({ ...base, run: () => ({ ok: true, points: [{ quantity: 'C', expected: 1, got: NaN }] }) }).verdict).toBe('FAIL');
    expect(runCase({ ...base, run: () => ({ ok: true, points: [] }) }).verdict).toBe('FAIL');
  });
});

describe('the verify command', () => {
  it('passes on this machine with exit 0 and prints every case as a table row with its verdict', () => {
    const out = runCli(['verify']);
    expect(out.stderr).toBe('');
    expect(out.code).toBe(0);
    const lines = out.stdout.split('\n');
    expect(lines[0]).toContain(`Tidemark ${pkg.version} verification — Node ${process.version}, ${process.platform}`);
    const header = lines.find((l) => l.startsWith('case'));
    expect(header?.split(/\s{2,}/)).toEqual(['case', 'source', 'expected', 'got', 'error', 'tolerance', 'verdict']);
    for (const c of referenceCases) {
      const row = lines.find((l) => l.startsWith(`${c.id}: `));
      expect(row, c.id).toBeDefined();
      expect(row, c.id).toContain(c.source);
      expect(row?.trimEnd().endsWith('pass'), row).toBe(true);
    }
    expect(out.stdout).toContain(`all ${referenceCases.length} cases passed`);
    expect(out.stdout).toContain('not a clinical validation');
  });

  it('a deliberately broken case makes it exit 1 with a FAIL row, the others still shown', () => {
    const cases = referenceCases.map((c) => (c.id === 'two-compartment-biexponential' ? perturbed(c, 1.001) : c));
    const out = runCli(['verify'], { cases });
    expect(out.code).toBe(1);
    const row = out.stdout.split('\n').find((l) => l.startsWith('two-compartment-biexponential: '));
    expect(row?.trimEnd().endsWith('FAIL')).toBe(true);
    expect(out.stdout).toContain(`1 of ${referenceCases.length} cases FAILED`);
    expect(out.stdout.split('\n').filter((l) => /\spass$/.test(l))).toHaveLength(referenceCases.length - 1);
  });

  it('--out writes the record as JSON with version, node and platform, relative to the folder', () => {
    const out = runCli(['verify', '--out', 'record.json'], { folder: dir });
    expect(out.code).toBe(0);
    expect(out.file?.path).toBe(join(dir, 'record.json'));
    expect(out.stderr).toBe(`wrote verification record to ${join(dir, 'record.json')}\n`);
    const record = JSON.parse(out.file?.text ?? '');
    expect(record.version).toBe(pkg.version);
    expect(record.node).toBe(process.version);
    expect(record.platform).toContain(process.platform);
    expect(record.passed).toBe(true);
    expect(Number.isNaN(Date.parse(record.time))).toBe(false);
    expect(record.cases).toHaveLength(referenceCases.length);
    for (const c of record.cases) {
      expect(c.verdict).toBe('pass');
      expect(c.error).toBeLessThanOrEqual(c.tolerance);
      expect(typeof c.expected).toBe('number');
      expect(typeof c.got).toBe('number');
      expect(c.compared).toBeGreaterThan(0);
    }
  });

  it('rejects arguments it does not take', () => {
    expect(runCli(['verify', 'extra']).code).toBe(2);
    expect(runCli(['verify', '--format', 'json']).code).toBe(2);
  });

  it('as a real process: exit 0, the table on stdout, the record written atomically', () => {
    const record = join(dir, 'process-record.json');
    const run = spawnSync('node', ['--import', 'tsx', 'server/cli.ts', 'verify', '--out', record], { cwd: root, encoding: 'utf8', timeout: 120_000 });
    expect(run.status).toBe(0);
    expect(run.stdout).toContain(`all ${referenceCases.length} cases passed`);
    expect(run.stderr).toBe(`wrote verification record to ${record}\n`);
    const parsed = JSON.parse(readFileSync(record, 'utf8'));
    expect(parsed.passed).toBe(true);
    expect(parsed.version).toBe(pkg.version);
  });
});

describe('help', () => {
  it('--help and no arguments list verify among the commands', () => {
    const help = runCli(['--help']);
    expect(help.code).toBe(0);
    expect(help.stdout).toMatch(/^ {2}verify {2,}check this installation/m);
    for (const command of ['simulate', 'report', 'validate', 'schema']) expect(help.stdout).toMatch(new RegExp(`^ {2}${command} `, 'm'));
    const none = runCli([]);
    expect(none.code).toBe(2);
    expect(none.stderr).toContain('verify');
    expect(runCli(['simulate', '--help']).code).toBe(0);
  });
});
