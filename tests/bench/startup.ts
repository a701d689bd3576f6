/**
 * Start-up figures of the built command line and server, each against a bare `node -e 0`
 * measured in the same run (the machine's state moves; a ratio taken within one run does
 * not move with it as much).
 *
 * - CLI: wall time of the demo process alone, `node dist/server/cli.js simulate
 *   samples/brennock-oral-bid.json --format text` (no npm start-up), from spawn to exit, in
 *   rounds that alternate it with `node -e 0`; the same demo from the TypeScript sources
 *   through tsx (`node --import tsx server/cli.ts …`, what `npm run demo` ran before the
 *   build) for context, in fewer rounds (seconds each).
 * - Server: time from spawning the process to the first 200 of POST /api/simulate (the
 *   demo scenario), and its resident memory (the process with its worker threads) once
 *   idle and settled; the built server and, for context, the sources through tsx.
 *
 * The figures are medians; each run's values are kept, with the load average at the start
 * and at the end.
 */
import { spawn, spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync } from 'node:fs';
import { createServer } from 'node:net';
import { loadavg, tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

/** The repository root: the nearest folder above this file (or its bundle) holding package.json. */
function projectRoot(): string {
  let dir = dirname(fileURLToPath(import.meta.url));
  while (!existsSync(join(dir, 'package.json')) && dirname(dir) !== dir) dir = dirname(dir);
  return dir;
}

export const root = projectRoot();
export const demoArgs = ['simulate', 'samples/brennock-oral-bid.json', '--format', 'text'];
/** The issue's bound: the demo's own process within 4× a bare node start. */
export const TARGET_STARTUP_RATIO = 4;

export interface Samples {
  median: number;
  min: number;
  values: number[];
}

function samples(values: number[]): Samples {
  const sorted = [...values].sort((a, b) => a - b);
  const n = sorted.length;
  const median = n === 0 ? Number.NaN : n % 2 ? sorted[n >> 1] : (sorted[n / 2 - 1] + sorted[n / 2]) / 2;
  return { median, min: sorted[0] ?? Number.NaN, values };
}

/** Runs a command to its end; its wall time in ms. A failure stops the bench: a figure of a failed run means nothing. */
function timedRun(args: string[], check?: (stdout: string) => boolean): number {
  const t0 = performance.now();
  const run = spawnSync(process.execPath, args, { cwd: root, encoding: 'utf8', maxBuffer: 1 << 24 });
  const ms = performance.now() - t0;
  if (run.status !== 0 || (check && !check(run.stdout))) {
    throw new Error(`\`node ${args.join(' ')}\` failed (exit ${run.status}): ${run.stderr.slice(0, 500)}`);
  }
  return ms;
}

/** Builds the server and command line if the build is missing or stale, and the page if it is missing (the server serves it). */
export function ensureBuilt(): void {
  const server = spawnSync(process.execPath, ['scripts/build-server.mjs', '--if-stale', '--quiet'], { cwd: root, stdio: 'inherit' });
  if (server.status !== 0) throw new Error('the server build failed');
  if (!existsSync(join(root, 'dist', 'client', 'index.html'))) {
    const page = spawnSync('npx', ['vite', 'build', '--logLevel', 'warn'], { cwd: root, stdio: 'inherit' });
    if (page.status !== 0) throw new Error('the page build failed');
  }
}

const demoOutput = (stdout: string) => stdout.includes('Brennock') && stdout.length > 200;

export interface CliStartup {
  bare: Samples;
  built: Samples;
  /** median(built) / median(bare). */
  ratio: number;
  /** Median of the per-round ratios (each demo run over the bare start beside it): a cross-check. */
  pairedRatio: number;
  sources: Samples | null;
  sourcesRatio: number | null;
}

export function measureCli(rounds: number, sourceRounds: number): CliStartup {
  const bare: number[] = [];
  const built: number[] = [];
  const sources: number[] = [];
  const cli = join('dist', 'server', 'cli.js');
  // One untimed run of each: the files are then in the page cache for every timed run.
  timedRun(['-e', '0']);
  timedRun([cli, ...demoArgs], demoOutput);
  for (let i = 0; i < rounds; i++) {
    bare.push(timedRun(['-e', '0']));
    built.push(timedRun([cli, ...demoArgs], demoOutput));
    if (i < sourceRounds) sources.push(timedRun(['--import', 'tsx', 'server/cli.ts', ...demoArgs], demoOutput));
  }
  const b = samples(bare);
  const d = samples(built);
  const s = sources.length > 0 ? samples(sources) : null;
  return {
    bare: b,
    built: d,
    ratio: d.median / b.median,
    pairedRatio: samples(built.map((v, i) => v / bare[i])).median,
    sources: s,
    sourcesRatio: s ? s.median / b.median : null,
  };
}

function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const probe = createServer();
    probe.once('error', reject);
    probe.listen(0, '127.0.0.1', () => {
      const address = probe.address();
      const port = typeof address === 'object' && address ? address.port : 0;
      probe.close(() => resolve(port));
    });
  });
}

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

function rssMb(pid: number): number | null {
  try {
    const line = readFileSync(`/proc/${pid}/status`, 'utf8')
      .split('\n')
      .find((l) => l.startsWith('VmRSS:'));
    return line ? Number(line.replace(/\D+/g, '')) / 1024 : null;
  } catch {
    return null;
  }
}

export interface ServerRun {
  /** Spawn to the first 200 of POST /api/simulate, ms. */
  firstOkMs: number;
  /** Resident memory once idle and settled, MB (null where /proc is absent). */
  idleRssMb: number | null;
}

/**
 * Starts a server (`args` after node) on a free port, posts the demo scenario until it
 * answers 200, then samples its resident memory every 250 ms until it has grown by less than
 * 1 MB over 2 s (the workers still loading grow it), at most 60 s; then stops it.
 */
async function serverRun(args: string[]): Promise<ServerRun> {
  const port = await freePort();
  const body = readFileSync(join(root, 'samples', 'brennock-oral-bid.json'), 'utf8');
  const t0 = performance.now();
  const child = spawn(process.execPath, args, { cwd: root, env: { ...process.env, PORT: String(port), HOST: '127.0.0.1', TIDEMARK_DATA: mkdtempSync(join(tmpdir(), 'tidemark-bench-data-')) }, stdio: ['ignore', 'ignore', 'pipe'] });
  let stderr = '';
  child.stderr.on('data', (d: Buffer) => (stderr += d.toString()));
  let exited = false;
  child.on('exit', () => (exited = true));
  try {
    let firstOkMs = Number.NaN;
    while (!exited && performance.now() - t0 < 180_000) {
      try {
        const res = await fetch(`http://127.0.0.1:${port}/api/simulate`, { method: 'POST', headers: { 'content-type': 'application/json' }, body });
        const text = await res.text();
        if (res.status === 200 && text.startsWith('{')) {
          firstOkMs = performance.now() - t0;
          break;
        }
        if (res.status !== 503) throw new Error(`the server answered ${res.status}: ${text.slice(0, 300)}`);
      } catch (e) {
        if (!(e instanceof TypeError)) throw e; // TypeError: not listening yet
      }
      await sleep(25);
    }
    if (!Number.isFinite(firstOkMs)) throw new Error(`the server never answered 200: ${stderr.slice(0, 500)}`);
    const pid = child.pid as number;
    const history: number[] = [];
    const settleStart = performance.now();
    for (;;) {
      const rss = rssMb(pid);
      if (rss === null) return { firstOkMs, idleRssMb: null };
      history.push(rss);
      const twoSecondsAgo = history.length > 8 ? history[history.length - 9] : null;
      if ((twoSecondsAgo !== null && rss - twoSecondsAgo < 1) || performance.now() - settleStart > 60_000) return { firstOkMs, idleRssMb: rss };
      await sleep(250);
    }
  } finally {
    child.kill('SIGTERM');
    await new Promise((r) => (exited ? r(null) : child.once('exit', r)));
  }
}

export interface ServerStartup {
  firstOk: Samples;
  idleRss: Samples | null;
}

export async function serverRuns(args: string[], runs: number): Promise<ServerStartup> {
  const results: ServerRun[] = [];
  for (let i = 0; i < runs; i++) results.push(await serverRun(args));
  const rss = results.map((r) => r.idleRssMb).filter((v): v is number => v !== null);
  return { firstOk: samples(results.map((r) => r.firstOkMs)), idleRss: rss.length > 0 ? samples(rss) : null };
}

export interface StartupFigures {
  loadAverageAtStart: number[];
  loadAverageAtEnd: number[];
  cli: CliStartup;
  server: { built: ServerStartup; sources: ServerStartup | null };
  target: number;
  pass: boolean;
}

export interface StartupOptions {
  /** Rounds of `node -e 0` against the built demo. */
  rounds?: number;
  /** Rounds of the demo from the sources through tsx (0 for none). */
  sourceRounds?: number;
  serverRuns?: number;
  /** Starts of the sources' server through tsx (0 for none). */
  sourceServerRuns?: number;
}

export async function measureStartup(options: StartupOptions = {}): Promise<StartupFigures> {
  const { rounds = 9, sourceRounds = 3, serverRuns: builtServerRuns = 3, sourceServerRuns = 1 } = options;
  ensureBuilt();
  const loadAverageAtStart = loadavg();
  const cli = measureCli(rounds, sourceRounds);
  const built = await serverRuns([join('dist', 'server', 'main.js')], builtServerRuns);
  const sources = sourceServerRuns > 0 ? await serverRuns(['--import', 'tsx', 'server/main.ts'], sourceServerRuns) : null;
  return { loadAverageAtStart, loadAverageAtEnd: loadavg(), cli, server: { built, sources }, target: TARGET_STARTUP_RATIO, pass: cli.ratio <= TARGET_STARTUP_RATIO };
}

const ms = (v: number) => (Number.isFinite(v) ? v.toFixed(0) : 'n/a');
const list = (s: Samples) => s.values.map((v) => v.toFixed(0)).join(' ');

/** The figures as lines of text for the bench's output. */
export function startupReport(f: StartupFigures): string {
  const load = (l: number[]) => l.map((v) => v.toFixed(2)).join(' ');
  const rows: string[] = [
    `load average ${load(f.loadAverageAtStart)} at the start, ${load(f.loadAverageAtEnd)} at the end; medians of each run's wall time (ms; every run listed).`,
    `node -e 0                                   ${ms(f.cli.bare.median).padStart(6)} ms   [${list(f.cli.bare)}]`,
    `demo, built: node dist/server/cli.js …      ${ms(f.cli.built.median).padStart(6)} ms   [${list(f.cli.built)}]`,
    `  ratio to node -e 0: ${f.cli.ratio.toFixed(2)}× (per-round ratios' median ${f.cli.pairedRatio.toFixed(2)}×); target ≤ ${f.target}×: ${f.pass ? 'PASS' : 'FAIL'}`,
  ];
  if (f.cli.sources && f.cli.sourcesRatio !== null) {
    rows.push(`demo, sources through tsx (before the build)  ${ms(f.cli.sources.median).padStart(6)} ms   [${list(f.cli.sources)}]  ratio ${f.cli.sourcesRatio.toFixed(1)}×`);
  }
  const server = (name: string, s: ServerStartup) =>
    `${name} first 200 of /api/simulate ${ms(s.firstOk.median)} ms [${list(s.firstOk)}]; idle RSS with its workers ${s.idleRss ? `${ms(s.idleRss.median)} MB [${list(s.idleRss)}]` : 'n/a'}`;
  rows.push(server('server, built (node dist/server/main.js):', f.server.built));
  if (f.server.sources) rows.push(server('server, sources through tsx:', f.server.sources));
  return rows.join('\n');
}
