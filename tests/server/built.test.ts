// The built server, its workers and the command line (scripts/build-server.mjs), built here
// into a folder of this test's own, so that neither a missing nor a stale dist/server can
// decide the outcome: each built program answers as the sources do, and its import graph
// loads the report writer (pdfkit) only for a report.
import { spawn, spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import { join, relative } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { resultToJsonText } from '../../models/result/result-format.ts';
import { simulate } from '../../models/simulate.ts';
import { runCli } from '../../server/cli.ts';
import { SimulationPool } from '../../server/worker-pool.ts';
import { ensureClientBuilt } from '../browser/harness.ts';

const root = fileURLToPath(new URL('../../', import.meta.url));
const brennockPath = 'samples/brennock-oral-bid.json';
const brennockText = readFileSync(join(root, brennockPath), 'utf8');
const brennock = JSON.parse(brennockText) as unknown;
// Inside the repository (dist/ is ignored): the external packages are found from there.
const outdir = join(root, 'dist', `test-build-${process.pid}`);
const out = (file: string) => join(outdir, file);

interface Info {
  outputs: string[];
  inputs: string[];
  imports: Record<string, { static: string[]; dynamic: string[] }>;
  packages: Record<string, { bytes: number; files: string[] }>;
}
let info: Info;

beforeAll(() => {
  const built = spawnSync(process.execPath, ['scripts/build-server.mjs', '--outdir', relative(root, outdir)], { cwd: root, encoding: 'utf8' });
  if (built.status !== 0) throw new Error(`the build failed: ${built.stdout}${built.stderr}`);
  info = JSON.parse(readFileSync(out('build-info.json'), 'utf8')) as Info;
}, 120_000);
afterAll(() => rmSync(outdir, { recursive: true, force: true }));

/** Every file and package an output loads at once (its static imports, followed). */
function loadedAtOnce(file: string, seen = new Set<string>()): Set<string> {
  if (seen.has(file)) return seen;
  seen.add(file);
  for (const next of info.imports[file]?.static ?? []) loadedAtOnce(next, seen);
  return seen;
}

/** Every file and package an output may load, on demand included. */
function loadedEver(file: string, seen = new Set<string>()): Set<string> {
  if (seen.has(file)) return seen;
  seen.add(file);
  for (const next of [...(info.imports[file]?.static ?? []), ...(info.imports[file]?.dynamic ?? [])]) loadedEver(next, seen);
  return seen;
}

describe('the build', () => {
  it('builds the four entries, with the program marked as a script', () => {
    for (const f of ['main.js', 'simulation-worker.js', 'cli.js', 'cli-worker.js']) expect(info.outputs).toContain(f);
    expect(readFileSync(out('cli.js'), 'utf8').startsWith('#!/usr/bin/env node\n')).toBe(true);
  });

  it("bundles mathjs's unit part only, and leaves pdfkit to node", () => {
    const mathjs = info.packages.mathjs;
    expect(mathjs.files.length).toBeGreaterThan(0);
    // The full entry bundles about 1,000 of its files (1.3 MB); units.ts's factory functions about 120.
    expect(mathjs.files.some((f) => f.includes('/expression/'))).toBe(false);
    expect(mathjs.files.length).toBeLessThan(300);
    // pdfkit reads its standard fonts through its own package's imports map, which a bundle lacks.
    expect(info.packages.pdfkit).toBeUndefined();
  });

  it('loads pdfkit for a report only: not at the start of the server, the command line or their workers', () => {
    for (const entry of ['simulation-worker.js', 'cli.js', 'cli-worker.js', 'main.js']) expect([...loadedAtOnce(entry)]).not.toContain('pdfkit');
    // …while the report path still reaches it, through import().
    expect([...loadedEver('simulation-worker.js')]).toContain('pdfkit');
    expect([...loadedEver('cli-worker.js')]).toContain('pdfkit');
  });

  it("keeps the command line's own thread free of the engine: the worker loads it", () => {
    const program = [...loadedAtOnce('cli.js')];
    const worker = [...loadedAtOnce('cli-worker.js')];
    // The engine's chunk holds models/simulate.ts; only the worker loads it at its start.
    const bytes = (files: string[]) => files.reduce((s, f) => s + (f.endsWith('.js') ? readFileSync(out(f)).length : 0), 0);
    expect(bytes(program)).toBeLessThan(64 * 1024);
    expect(bytes(worker)).toBeGreaterThan(500 * 1024);
  });

  it('is up to date right after building, and stale once a source it was built from is newer', async () => {
    const script = pathToFileURL(join(root, 'scripts', 'build-server.mjs')).href;
    const { staleReason } = (await import(script)) as { staleReason: (dir: string) => string | null };
    expect(staleReason(outdir)).toBeNull();
    const text = readFileSync(out('build-info.json'), 'utf8');
    const older = JSON.parse(text) as Info & { startedAt: number };
    older.startedAt = 0; // as if built before every source was last written
    writeFileSync(out('build-info.json'), JSON.stringify(older));
    try {
      expect(staleReason(outdir)).toMatch(/changed$/);
    } finally {
      writeFileSync(out('build-info.json'), text);
    }
  });
});

function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const probe = createServer();
    probe.once('error', reject);
    probe.listen(0, '127.0.0.1', () => {
      const a = probe.address();
      probe.close(() => resolve(typeof a === 'object' && a ? a.port : 0));
    });
  });
}

describe('the built server', () => {
  it('answers a simulation as the engine does, and a report, from its built workers', async () => {
    ensureClientBuilt(); // else the server would build the page itself
    const port = await freePort();
    const server = spawn(process.execPath, [out('main.js')], { cwd: root, env: { ...process.env, PORT: String(port), HOST: '127.0.0.1', TIDEMARK_DATA: mkdtempSync(join(tmpdir(), 'tidemark-built-data-')) }, stdio: ['ignore', 'pipe', 'pipe'] });
    let log = '';
    server.stdout.on('data', (d: Buffer) => (log += d.toString()));
    server.stderr.on('data', (d: Buffer) => (log += d.toString()));
    try {
      const base = `http://127.0.0.1:${port}`;
      let res: Response | null = null;
      for (let i = 0; i < 600 && !res; i++) {
        res = await fetch(`${base}/api/simulate`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: brennockText }).catch(() => null);
        if (!res) await new Promise((r) => setTimeout(r, 100));
      }
      if (!res) throw new Error(`the built server never answered: ${log}`);
      expect(res.status).toBe(200);
      const direct = simulate(brennock);
      if (!direct.ok) throw new Error('the sample must simulate');
      // Same code, same input: the same text, byte for byte.
      expect(await res.text()).toBe(resultToJsonText(direct.value));
      const page = await fetch(`${base}/`);
      expect(page.status).toBe(200);
      const report = await fetch(`${base}/api/report`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ scenario: brennock }) });
      expect(report.status).toBe(200);
      expect(report.headers.get('content-type')).toMatch(/application\/pdf/);
      expect(Buffer.from(await report.arrayBuffer()).subarray(0, 5).toString('latin1')).toBe('%PDF-');
      expect(log).toContain(`http://127.0.0.1:${port}/`);
      expect(log).not.toMatch(/error|failed/i);
    } finally {
      server.kill('SIGTERM');
      await new Promise((r) => (server.exitCode !== null ? r(null) : server.once('exit', r)));
    }
  });

  it('runs the built worker in a pool told to, and the source worker in a pool told nothing', async () => {
    const built = new SimulationPool({ size: 1, timeBudgetMs: 60_000, maxQueue: 4, worker: { kind: 'built', url: pathToFileURL(out('simulation-worker.js')) } });
    const fromSources = new SimulationPool({ size: 1, timeBudgetMs: 60_000, maxQueue: 4 });
    try {
      const job = { kind: 'simulate' as const, scenario: brennock, maxOutputPoints: 100_000 };
      const [a, b] = await Promise.all([built.run(job), fromSources.run(job)]);
      expect(a.status).toBe(200);
      expect(b.status).toBe(200);
      expect(a.body).toBe(b.body);
      // A pool told of a built worker that is not there fails plainly, with no fallback.
      const missing = new SimulationPool({ size: 1, timeBudgetMs: 60_000, maxQueue: 4, worker: { kind: 'built', url: pathToFileURL(out('no-such-worker.js')) } });
      try {
        const reply = await missing.run(job);
        expect(reply.status).toBe(500);
      } finally {
        await missing.close();
      }
    } finally {
      await Promise.all([built.close(), fromSources.close()]);
    }
  });
});

describe('the built command line', () => {
  const cli = (args: string[], cwd = root) => spawnSync(process.execPath, [out('cli.js'), ...args], { cwd, encoding: 'utf8', timeout: 120_000 });

  it('prints the demo summary as the sources compute it, through its built worker', () => {
    const run = cli(['simulate', brennockPath, '--format', 'text']);
    expect(run.stderr).toBe('');
    expect(run.status).toBe(0);
    expect(run.stdout).toBe(runCli(['simulate', brennockPath, '--format', 'text']).stdout);
  });

  it('runs verify in its own thread, its reference cases loaded on demand', () => {
    const run = cli(['verify']);
    expect(run.stderr).toBe('');
    expect(run.status).toBe(0);
    expect(run.stdout).toMatch(/all \d+ cases passed/);
  });

  it('writes a report (the report writer loaded on demand) and answers usage errors with code 2', () => {
    const dir = mkdtempSync(join(tmpdir(), 'tidemark-built-'));
    try {
      const target = join(dir, 'r.pdf');
      const run = cli(['report', join(root, brennockPath), '--out', target]);
      expect(run.status).toBe(0);
      expect(readFileSync(target).subarray(0, 5).toString('latin1')).toBe('%PDF-');
      const bad = cli(['simulate', brennockPath, '--format', 'xml']);
      expect(bad.status).toBe(2);
      expect(bad.stderr).toMatch(/--format must be json, csv or text/);
      expect(bad.stderr).not.toMatch(/\n\s+at /);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});
