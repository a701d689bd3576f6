/** `fit FILE` on the command line: the text table with the caution, JSON, --out, and refusals. */
import { describe, expect, it } from 'vitest';
import { resolve } from 'node:path';
import { loadCommandModules, runCli } from '../../server/cli-commands.ts';

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
