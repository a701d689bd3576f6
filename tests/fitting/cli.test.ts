/** `fit FILE` on the command line: the text table with the caution and clock times, JSON, --out, and refusals. */
import { describe, expect, it } from 'vitest';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { loadCommandModules, runCli } from '../../server/cli-commands.ts';
import { oneCompartmentOral, oralClosedForm } from './synthetic.ts';

const root = resolve(import.meta.dirname, '../..');

describe('fit on the command line', () => {
  it('prints the estimates, the levels and the caution; --out carries the fitted scenario', async () => {
    await loadCommandModules(['fit']);
    const o = runCli(['fit', 'samples/orvanix-fit.json', '--out', '/tmp/orvanix-fitted.json'], { folder: root });
    expect(o.code).toBe(0);
    expect(o.stdout).toContain('Fit by maximum a posteriori');
    expect(o.stdout).toMatch(/^CL\s+\S+\s+L\/h/m);
    expect(o.stdout).toContain('Individual estimates are model outputs for review by a clinician; they are not dosing advice.');
    expect(o.stdout).toContain('below limit');
    const fitted = JSON.parse(o.file?.text ?? 'null') as { fit?: unknown; transfers: { cl?: unknown }[] };
    expect(fitted.fit).toBeUndefined();
    expect(typeof fitted.transfers[1].cl).toBe('string');
  });

  it('with a clock, each level\'s clock time beside its elapsed time; without one, none', async () => {
    await loadCommandModules(['fit']);
    const o = runCli(['fit', 'samples/orvanix-fit.json'], { folder: root });
    expect(o.code).toBe(0);
    // The sample's first level is written 2026-03-04T10:10 at +01:00, its clock origin 08:00 the same day.
    expect(o.stdout).toMatch(/^level\s+time\s+clock time\s+observed/m);
    expect(o.stdout).toMatch(/^observations\[0\].*\s2\.167\s+2026-03-04 10:10 \(\+01:00\)\s+8\.9\s/m);
    const plain = join(mkdtempSync(join(tmpdir(), 'fit-cli-')), 'no-clock.json');
    const levels = [1, 2, 4, 8, 12, 24].map((t) => ({ time: t, concentration: oralClosedForm(400, 1, 4, 50, t) }));
    writeFileSync(plain, JSON.stringify(oneCompartmentOral({ ka: '1 1/h', cl: '4 L/h', v: '50 L' }, levels, { estimate: ['transfers[1].cl', 'compartments[1].volume'], objective: 'wls' })));
    const p = runCli(['fit', plain], { folder: root });
    expect(p.code).toBe(0);
    expect(p.stdout).toMatch(/^level\s+time\s+observed/m);
    expect(p.stdout).not.toContain('clock time');
  });

  it('--format json and --objective wls', async () => {
    await loadCommandModules(['fit']);
    const o = runCli(['fit', 'samples/orvanix-fit.json', '--objective', 'wls', '--format', 'json'], { folder: root });
    expect(o.code).toBe(0);
    const r = JSON.parse(o.stdout) as { settings: { objective: string }; estimates: Record<string, { value: number; standardError: number }>; predictions: unknown[] };
    expect(r.settings.objective).toBe('wls');
    expect(Object.keys(r.estimates)).toEqual(['CL', 'V', 'ka']);
    expect(r.predictions).toHaveLength(6);
  });

  it('refuses to write over the input, and a bad --objective', async () => {
    await loadCommandModules(['fit']);
    expect(runCli(['fit', 'samples/orvanix-fit.json', '--out', 'samples/orvanix-fit.json'], { folder: root })).toMatchObject({ code: 2, stderr: expect.stringContaining('refusing to write') });
    expect(runCli(['fit', 'samples/orvanix-fit.json', '--objective', 'ml'], { folder: root })).toMatchObject({ code: 2, stderr: expect.stringContaining('--objective must be wls or map') });
  });
});
