/**
 * `npm start`: builds the page if it is missing, then serves it and the API on
 * http://127.0.0.1:8750 (PORT and HOST override; loopback unless HOST says otherwise).
 * The server answers only for the loopback names and HOST; ALLOWED_HOSTS (comma-separated)
 * adds names, e.g. when HOST is 0.0.0.0, which otherwise answers for any name.
 *
 * `npm start` runs the build of this file (dist/server/main.js, scripts/build-server.mjs)
 * with plain node; `tsx server/main.ts` runs the sources. Each starts its workers in its own
 * form: the built server the built worker beside it, the sources the worker's source.
 */
import { spawnSync } from 'node:child_process';
import { existsSync } from 'node:fs';
import { availableParallelism } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { tuneEngine } from './engine-flags.ts';
import { allowedHostsFor, createApp, defaultServerLimits, populationJobsOf } from './app.ts';
import { loadSamples } from './samples.ts';
import { defaultPoolMemory, SimulationPool, type WorkerModule } from './worker-pool.ts';
import { StoreHandle } from './store/handle.ts';
import { storeFileOf } from './store/location.ts';

// The build keeps this module's own URL (its other modules see their sources' URLs), so
// the extension says which form is running.
const built = import.meta.url.endsWith('.js');
const worker: WorkerModule | undefined = built ? { kind: 'built', url: new URL('./simulation-worker.js', import.meta.url) } : undefined;
// Population threads likewise: the built thread beside the built server, else the source (the default).
const populationWorker: WorkerModule | undefined = built ? { kind: 'built', url: new URL('./population-worker.js', import.meta.url) } : undefined;

/** The repository root: the nearest folder above this file that holds package.json (server/ or dist/server/ lie below it). */
function projectRoot(): string {
  let dir = dirname(fileURLToPath(import.meta.url));
  while (!existsSync(join(dir, 'package.json')) && dirname(dir) !== dir) dir = dirname(dir);
  return dir;
}

const root = projectRoot();
const clientDir = join(root, 'dist', 'client') + '/';

function ensureClientBuilt(): void {
  if (existsSync(`${clientDir}index.html`)) return;
  console.log('Building the page (first start)…');
  const page = spawnSync('npx', ['vite', 'build', '--logLevel', 'warn'], { cwd: root, stdio: 'inherit' });
  if (page.status !== 0) {
    console.error('The page could not be built; the API will still answer. Run `npm run build` to see why.');
  }
}

function main(): void {
  tuneEngine();
  ensureClientBuilt();
  const host = process.env.HOST ?? '127.0.0.1';
  const port = Number(process.env.PORT ?? 8750);
  const allowedHosts = allowedHostsFor(host, process.env.ALLOWED_HOSTS);
  const pool = new SimulationPool({
    // Two workers more than cores (at most 8): a long job holds a worker for up to the
    // time budget, and short ones must still find a free worker beside two such jobs.
    size: Math.min(8, availableParallelism() + 2),
    timeBudgetMs: defaultServerLimits.timeBudgetMs,
    maxQueue: 64,
    ...defaultPoolMemory,
    ...(worker ? { worker } : {}),
  });
  // Populations run on as many threads as the pool has workers, in the same form as the server.
  const population = { threads: pool.options.size, ...(populationWorker ? { worker: populationWorker } : {}) };
  // The scenario store: a file that cannot be used turns saving off with a message; the rest serves on.
  const store = new StoreHandle(storeFileOf(process.env, root));
  const storeStatus = store.status();
  if (!storeStatus.available) console.error(`Saving is off: ${storeStatus.message}`);
  else if (storeStatus.message) console.error(storeStatus.message);
  const app = createApp({ pool, samples: loadSamples(), clientDir, limits: defaultServerLimits, allowedHosts, population, store });
  const server = app.listen(port, host, () => {
    const shown = host.includes(':') ? `[${host}]` : host;
    console.log(`Tidemark is serving on http://${shown}:${port}/ (Ctrl-C to stop)`);
    if (storeStatus.available) console.log(`Scenarios are kept in ${store.file}`);
    console.log('Results are model simulations for review, not dosing advice.');
    if (allowedHosts === 'any') console.log('Answering for any Host name; set ALLOWED_HOSTS to the names this server is reached by.');
  });
  server.on('error', (e: NodeJS.ErrnoException) => {
    console.error(e.code === 'EADDRINUSE' ? `port ${port} is in use; set PORT to another port` : `cannot listen: ${e.message}`);
    process.exit(1);
  });
  const stop = () => {
    server.close();
    store.close();
    void Promise.all([pool.close(), populationJobsOf(app)?.close()]).then(() => process.exit(0));
  };
  process.on('SIGINT', stop);
  process.on('SIGTERM', stop);
}

main();
