/**
 * `npm run bench:propose`: the regimen-proposal figures alone (propose.ts), without the solver
 * bench; they go to tests/artifacts/propose.json as well.
 */
import { mkdirSync, writeFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { measurePropose, proposeReport } from './propose.ts';

const root = join(dirname(fileURLToPath(import.meta.url)), '..', '..');
const figures = measurePropose();
console.log('Regimen proposals');
console.log(proposeReport(figures));
const artifacts = join(root, 'tests', 'artifacts');
mkdirSync(artifacts, { recursive: true });
writeFileSync(join(artifacts, 'propose.json'), JSON.stringify({ generated: new Date().toISOString(), ...figures }, null, 2) + '\n');
console.log('Figures written to tests/artifacts/propose.json.');
