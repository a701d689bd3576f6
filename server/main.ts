/**
 * `npm start`: builds the page if it is missing, then serves it and the API on
 * http://127.0.0.1:8750 (PORT and HOST override; loopback unless HOST says otherwise).
 */
import { spawnSync } from 'node:child_process';
import { existsSync } from 'node:fs';
import { availableParallelism } from 'node:os';
import { fileURLToPath } from 'node:url';
import { createApp, defaultServerLimits } from './app.ts';
import { loadSamples } from './samples.ts';
import { SimulationPool } from './worker-pool.ts';

const root = fileURLToPath(new URL('..', import.meta.url));
const clientDir = fileURLToPath(new URL('../dist/client/', import.meta.url));

function ensureClientBuilt(): void {
  if (existsSync(`${clientDir}index.html`)) return;
  console.log('Building the page (first start)…');
  const built = spawnSync('npx', ['vite', 'build', '--logLevel', 'warn'], { cwd: root, stdio: 'inherit' });
  if (built.status !== 0) {
    console.error('The page could not be built; the API will still answer. Run `npm run build` to see why.');
  }
}

function main(): void {
  ensureClientBuilt();
  const host = process.env.HOST ?? '127.0.0.1';
  const port = Number(process.env.PORT ?? 8750);
  const pool = new SimulationPool({
    size: Math.max(1, Math.min(4, availableParallelism())),
    timeBudgetMs: defaultServerLimits.timeBudgetMs,
    maxQueue: 64,
  });
  const app = createApp({ pool, samples: loadSamples(), clientDir, limits: defaultServerLimits });
  const server = app.listen(port, host, () => {
    const shown = host.includes(':') ? `[${host}]` : host;
    console.log(`Tidemark is serving on http://${shown}:${port}/ (Ctrl-C to stop)`);
    console.log('Results are model simulations for review, not dosing advice.');
  });
  server.on('error', (e: NodeJS.ErrnoException) => {
    console.error(e.code === 'EADDRINUSE' ? `port ${port} is in use; set PORT to another port` : `cannot listen: ${e.message}`);
    process.exit(1);
  });
  const stop = () => {
    server.close();
    void pool.close().then(() => process.exit(0));
  };
  process.on('SIGINT', stop);
  process.on('SIGTERM', stop);
}

main();
