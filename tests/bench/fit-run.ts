/**
 * `npm run bench:fit`: the fitting figures alone (fit.ts), without the solver bench; they go
 * to tests/artifacts/fit.json as well.
 */
import { mkdirSync, writeFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { fitReport, measureFit } from './fit.ts';
import { tuneEngine } from '../../server/engine-flags.ts';

// The engine as the server and the command line run it (server/engine-flags.ts).
tuneEngine();

const root = join(dirname(fileURLToPath(import.meta.url)), '..', '..');
const figures = measureFit();
console.log('Fitting individual parameters');
console.log(fitReport(figures));
const artifacts = join(root, 'tests', 'artifacts');
mkdirSync(artifacts, { recursive: true });
writeFileSync(join(artifacts, 'fit.json'), JSON.stringify({ generated: new Date().toISOString(), ...figures }, null, 2) + '\n');
console.log('Figures written to tests/artifacts/fit.json.');
