/**
 * `npm run bench:store`: the scenario-store figures alone (store.ts), without the solver
 * bench; they go to tests/artifacts/store.json as well.
 */
import { mkdirSync, writeFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { measureStore, storeReport } from './store.ts';
import { tuneEngine } from '../../server/engine-flags.ts';

// The engine as the server and the command line run it (server/engine-flags.ts).
tuneEngine();

const root = join(dirname(fileURLToPath(import.meta.url)), '..', '..');
const figures = measureStore();
console.log('Scenario store');
console.log(storeReport(figures));
const artifacts = join(root, 'tests', 'artifacts');
mkdirSync(artifacts, { recursive: true });
writeFileSync(join(artifacts, 'store.json'), JSON.stringify({ generated: new Date().toISOString(), ...figures }, null, 2) + '\n');
console.log('Figures written to tests/artifacts/store.json.');
