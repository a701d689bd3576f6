/**
 * `npm run bench:population`, and the child process of each population run of the benchmark
 * (`node dist/bench/population.mjs run <saturable> <subjects> <step> [end]` prints one JSON line).
 */
import { tuneEngine } from '../../server/engine-flags.ts';
import { measurePopulation, populationReport, runHere } from './population.ts';

// The engine as the command line runs it (server/engine-flags.ts), in the child runs and the per-subject figures alike.
tuneEngine();
const [mode, saturable, subjects, step, end] = process.argv.slice(2);
if (mode === 'run') {
  const r = await runHere(saturable === 'true', Number(subjects), Number(step), end === undefined ? undefined : Number(end));
  console.log(JSON.stringify(r));
} else {
  console.log('Virtual populations');
  console.log(populationReport(await measurePopulation()));
}
