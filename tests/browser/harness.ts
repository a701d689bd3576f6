/**
 * What a browser test needs around the page: the built page (built here when missing or
 * older than its sources), the real server on a free loopback port with a real worker
 * pool, and Debian's Chromium driven by playwright-core. No browser is ever downloaded.
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, readdirSync, rmSync, statSync } from 'node:fs';
import type { Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { chromium, type Browser } from 'playwright-core';
import { createApp, defaultServerLimits } from '../../server/app.ts';
import { loadSamples } from '../../server/samples.ts';
import { SimulationPool, type WorkerModule } from '../../server/worker-pool.ts';

export const repoRoot = fileURLToPath(new URL('../../', import.meta.url));
export const clientDir = join(repoRoot, 'dist/client');
export const artifactsDir = join(repoRoot, 'tests/artifacts/browser');
export const chromiumPath = '/usr/bin/chromium';

function newestMtime(path: string): number {
  const s = statSync(path);
  if (!s.isDirectory()) return s.mtimeMs;
  let newest = 0;
  for (const entry of readdirSync(path)) newest = Math.max(newest, newestMtime(join(path, entry)));
  return newest;
}

/**
 * Builds the page with the repository's vite config when dist/client/index.html is missing
 * or older than anything the bundle is made from (client/, the config, the engine module and
 * the report helpers the page imports at run time), so the test never drives a stale page.
 */
export function ensureClientBuilt(): void {
  const index = join(clientDir, 'index.html');
  // The page also imports pure modules of the core (summary text, fingerprint, axis ticks, dose-line words).
  const sources = [join(repoRoot, 'client'), join(repoRoot, 'vite.config.ts'), join(repoRoot, 'models')];
  const fresh = () => existsSync(index) && statSync(index).mtimeMs >= Math.max(...sources.map(newestMtime));
  if (fresh()) return;
  // Browser test files run in parallel processes, and the build empties dist/client first:
  // one build at a time, and a file that waited finds the page already built.
  withBuildLock(() => {
    if (fresh()) return;
    const built = spawnSync('npx', ['vite', 'build', '--logLevel', 'warn'], { cwd: repoRoot, encoding: 'utf8' });
    if (built.status !== 0 || !existsSync(index)) {
      throw new Error(`\`npx vite build\` failed (status ${built.status}):\n${built.stdout}\n${built.stderr}`);
    }
  });
}

/** A lock directory beside dist/client (mkdir is atomic); one left by a crashed build is taken over after 5 min. */
function withBuildLock(build: () => void): void {
  const lock = join(repoRoot, 'dist/.client-build.lock');
  const staleMs = 300_000;
  mkdirSync(dirname(lock), { recursive: true });
  const pause = new Int32Array(new SharedArrayBuffer(4));
  for (;;) {
    try {
      mkdirSync(lock);
      break;
    } catch (err) {
      if ((err as NodeJS.ErrnoException).code !== 'EEXIST') throw err;
    }
    let age = 0;
    try {
      age = Date.now() - statSync(lock).mtimeMs;
    } catch {
      continue; // released between the two calls
    }
    if (age > staleMs) rmSync(lock, { recursive: true, force: true });
    // The other process is building (a few seconds); look again shortly.
    else Atomics.wait(pause, 0, 0, 200);
  }
  try {
    build();
  } finally {
    rmSync(lock, { recursive: true, force: true });
  }
}

export interface RunningServer {
  baseUrl: string;
  close(): Promise<void>;
}

/** The real app (API + built page) on 127.0.0.1 at a port the system chooses. */
/**
 * The population threads run the built worker, as the built server does (from the sources every
 * thread would compile the engine through tsx first, seconds per run); built when stale, one
 * build at a time.
 */
function builtPopulationWorker(): WorkerModule {
  withBuildLock(() => {
    const build = spawnSync('node', ['scripts/build-server.mjs', '--if-stale', '--quiet'], { cwd: repoRoot, encoding: 'utf8', timeout: 180_000 });
    if (build.status !== 0) throw new Error(`building the server failed (status ${build.status}):\n${build.stderr}`);
  });
  return { kind: 'built', url: new URL(`file://${join(repoRoot, 'dist', 'server', 'population-worker.js')}`) };
}

export async function startServer(): Promise<RunningServer> {
  const pool = new SimulationPool({ size: 2, timeBudgetMs: 30_000, maxQueue: 16 });
  const app = createApp({ pool, samples: loadSamples(), clientDir, limits: defaultServerLimits, population: { worker: builtPopulationWorker() } });
  const server = await new Promise<Server>((resolve, reject) => {
    const s = app.listen(0, '127.0.0.1');
    s.once('listening', () => resolve(s));
    s.once('error', reject);
  });
  const { port } = server.address() as AddressInfo;
  return {
    baseUrl: `http://127.0.0.1:${port}/`,
    async close() {
      server.closeAllConnections();
      await new Promise<void>((resolve) => server.close(() => resolve()));
      await pool.close();
    },
  };
}

/** Debian's Chromium, headless. A missing binary is a failure with the fix, never a skip. */
export async function launchChromium(): Promise<Browser> {
  if (!existsSync(chromiumPath)) {
    throw new Error(
      `Chromium is not installed at ${chromiumPath}. The browser tests use Debian's package: ` +
        'install it with `sudo apt-get install chromium` (CI does the same). Do not download a browser.',
    );
  }
  return chromium.launch({
    executablePath: chromiumPath,
    args: ['--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-component-update', '--disable-sync', '--no-first-run'],
  });
}

export function artifactPath(name: string): string {
  mkdirSync(artifactsDir, { recursive: true });
  return join(artifactsDir, name);
}
