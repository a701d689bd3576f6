/**
 * `npm run bench:startup`: the start-up figures alone (startup.ts), without the solver bench;
 * they go to tests/artifacts/startup.json as well.
 * Options: --rounds N (default 9), --source-rounds N (3), --server-runs N (3), --source-server-runs N (1).
 */
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { measureStartup, root, startupReport, type StartupOptions } from './startup.ts';

function options(argv: string[]): StartupOptions {
  const names: Record<string, keyof StartupOptions> = {
    '--rounds': 'rounds',
    '--source-rounds': 'sourceRounds',
    '--server-runs': 'serverRuns',
    '--source-server-runs': 'sourceServerRuns',
  };
  const o: StartupOptions = {};
  for (let i = 0; i < argv.length; i += 2) {
    const key = names[argv[i]];
    const value = Number(argv[i + 1]);
    if (!key || !Number.isInteger(value) || value < 0) throw new Error(`usage: npm run bench:startup -- [${Object.keys(names).join(' N] [')} N]`);
    o[key] = value;
  }
  return o;
}

const figures = await measureStartup(options(process.argv.slice(2)));
console.log(startupReport(figures));
const artifacts = join(root, 'tests', 'artifacts');
mkdirSync(artifacts, { recursive: true });
writeFileSync(join(artifacts, 'startup.json'), JSON.stringify({ generated: new Date().toISOString(), ...figures }, null, 2) + '\n');
console.log('Figures written to tests/artifacts/startup.json.');
