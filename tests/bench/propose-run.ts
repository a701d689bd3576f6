/**
 * `npm run bench:propose`: the regimen-proposal figures alone (propose.ts), without the solver
 * bench, then population proposals (samples/orvanix-propose-population.json: 500 subjects × 18
 * saturable regimens, steady states and runs from the first dose, with a loading dose) on one
 * thread and on two (server/proposals-threads.ts with the built worker, dist/server/, built
 * first when stale); the two must give the same JSON. Everything goes to tests/artifacts/propose.json.
 * Add `-- --no-population` to skip the population part (about a minute of CPU).
 */
import { execFileSync } from 'node:child_process';
import { mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { cpus } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { proposeOnThreads } from '../../server/proposals-threads.ts';
import { populationProposalLimits } from '../../server/propose-cli.ts';
import { measurePropose, proposeReport } from './propose.ts';
import { tuneEngine } from '../../server/engine-flags.ts';

// The engine as the server and the command line run it (server/engine-flags.ts).
tuneEngine();

const root = join(dirname(fileURLToPath(import.meta.url)), '..', '..');
const figures = measurePropose();
console.log('Regimen proposals');
console.log(proposeReport(figures));

interface PopulationRun {
  threads: number;
  wallMs: number;
  /** CPU of this process (every thread), ms. */
  cpuMs: number;
}

/** One run of the population sample on `threads` threads (this one included), wall and CPU time. */
function populationRun(scenario: unknown, threads: number): { run: PopulationRun; json: string } {
  const worker = { kind: 'built' as const, url: pathToFileURL(join(root, 'dist', 'server', 'proposals-worker.js')) };
  const cpu0 = process.cpuUsage();
  const t0 = performance.now();
  const r = proposeOnThreads(scenario, populationProposalLimits, { threads, worker });
  const wallMs = performance.now() - t0;
  const cpu = process.cpuUsage(cpu0);
  if (!r.ok) throw new Error(JSON.stringify(r.problems));
  return { run: { threads, wallMs, cpuMs: (cpu.user + cpu.system) / 1000 }, json: JSON.stringify(r.value) };
}

let population: { subjects: number; regimens: number; intervalsSimulated: number; runs: PopulationRun[]; identical: boolean } | null = null;
if (!process.argv.includes('--no-population')) {
  execFileSync(process.execPath, [join(root, 'scripts', 'build-server.mjs'), '--if-stale', '--quiet'], { stdio: 'inherit' });
  const scenario = JSON.parse(readFileSync(join(root, 'samples', 'orvanix-propose-population.json'), 'utf8')) as { propose: Record<string, unknown> };
  scenario.propose.loading = true;
  const one = populationRun(scenario, 1);
  const two = populationRun(scenario, 2);
  const parsed = JSON.parse(one.json) as { population: { subjects: number }; searched: { regimens: number; intervalsSimulated: number } };
  population = { subjects: parsed.population.subjects, regimens: parsed.searched.regimens, intervalsSimulated: parsed.searched.intervalsSimulated, runs: [one.run, two.run], identical: one.json === two.json };
  const s = (ms: number) => (ms / 1000).toFixed(2);
  console.log('');
  console.log(`Population proposals: ${population.subjects} subjects × ${population.regimens} saturable regimens, with a loading dose (${cpus().length} cores)`);
  for (const r of population.runs) console.log(`  ${r.threads} thread${r.threads > 1 ? 's' : ''}: ${s(r.wallMs)} s wall, ${s(r.cpuMs)} s CPU`);
  console.log(`  ${population.intervalsSimulated} dosing intervals simulated from empty; 1 and 2 threads give the same JSON: ${population.identical ? 'yes' : 'NO'}`);
}

const artifacts = join(root, 'tests', 'artifacts');
mkdirSync(artifacts, { recursive: true });
writeFileSync(join(artifacts, 'propose.json'), JSON.stringify({ generated: new Date().toISOString(), ...figures, population }, null, 2) + '\n');
console.log('Figures written to tests/artifacts/propose.json.');
