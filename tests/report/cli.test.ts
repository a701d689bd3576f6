// `tidemark report FILE --out report.pdf`: in-process for content, one real subprocess for
// the written file and the exit code. Exit codes as the other commands: 0 written, 1 invalid
// scenario or failed computation, 2 usage error.
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { scenarioFingerprint } from '../../models/scenario/fingerprint.ts';
import { runCli } from '../../server/cli.ts';
import { pdfPages, readSample, removeTempFiles, root } from './helpers.ts';

const brennock = join(root, 'samples/brennock-oral-bid.json');
let dir: string;

beforeAll(() => {
  dir = mkdtempSync(join(tmpdir(), 'tidemark-cli-report-'));
});
afterAll(() => {
  rmSync(dir, { recursive: true, force: true });
  removeTempFiles();
});

describe('report command', () => {
  it('returns the PDF to write at --out', () => {
    const target = join(dir, 'in-process.pdf');
    const out = runCli(['report', brennock, '--out', target]);
    expect(out.code).toBe(0);
    expect(out.binaryFile?.path).toBe(target);
    const bytes = out.binaryFile?.bytes ?? new Uint8Array();
    expect(Buffer.from(bytes.subarray(0, 5)).toString('latin1')).toBe('%PDF-');
    expect(out.stderr).toContain(`wrote report to ${target}`);
    expect(out.stderr).toContain(scenarioFingerprint(readSample('brennock-oral-bid')));
  });

  it('names the file after the title and fingerprint when --out is not given', () => {
    const out = runCli(['report', brennock], { folder: dir });
    expect(out.code).toBe(0);
    // Named in, and written to, the folder the user is in.
    expect(out.binaryFile?.path).toBe(join(dir, `tidemark-brennock-400-mg-by-mouth-twice-daily-${scenarioFingerprint(readSample('brennock-oral-bid'))}.pdf`));
  });

  it('draws a reference given with --reference', () => {
    const other = join(dir, 'reference.json');
    writeFileSync(other, JSON.stringify({ ...readSample('brennock-oral-bid'), title: 'Brennock reference run' }));
    const out = runCli(['report', brennock, '--out', join(dir, 'ref.pdf'), '--reference', other]);
    expect(out.code).toBe(0);
    const text = pdfPages(out.binaryFile?.bytes ?? new Uint8Array()).join('\n');
    expect(text).toContain('Brennock reference run');
  });

  it('exits 1 with path: message lines for an invalid scenario', () => {
    const bad = join(dir, 'bad.json');
    writeFileSync(bad, JSON.stringify({ ...readSample('brennock-oral-bid'), doses: [{ into: 'tisue', amount: 100 }] }));
    const out = runCli(['report', bad, '--out', join(dir, 'never.pdf')]);
    expect(out.code).toBe(1);
    expect(out.binaryFile).toBeUndefined();
    expect(out.stderr).toContain("doses[0].into: no compartment named 'tisue'");
  });

  it('exits 2 for usage errors', () => {
    expect(runCli(['report']).code).toBe(2);
    expect(runCli(['report', brennock, '--format', 'pdf']).code).toBe(2);
    expect(runCli(['report', join(dir, 'missing.json')]).code).toBe(2);
  });

  it('writes the file from a real process and exits 0', () => {
    const target = join(dir, 'process.pdf');
    const done = spawnSync('npx', ['tsx', 'server/cli.ts', 'report', brennock, '--out', target], { cwd: root, encoding: 'utf8' });
    expect(done.status).toBe(0);
    expect(existsSync(target)).toBe(true);
    expect(readFileSync(target).subarray(0, 5).toString('latin1')).toBe('%PDF-');
  });
});
