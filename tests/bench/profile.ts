/**
 * Runs one benchmark configuration in a loop, for a CPU profile:
 *
 *   node --cpu-prof --cpu-prof-dir=tests/artifacts/profiles --import tsx tests/bench/profile.ts dop853 1e-8
 *   node --import tsx tests/bench/profile-summary.ts tests/artifacts/profiles/<file>.cpuprofile
 *
 * First argument: exact | dopri5 | dop853 | auto | odex | saturable (full simulate() of
 * the saturable variant) | simulate-exact (full simulate() of the linear model).
 * Second: rtol (atol = rtol · 1e-2 mg). Third: seconds to run (default 5).
 */
import { simulate } from '../../models/simulate.ts';
import { prepare, runEngine, runOdex } from './paths.ts';
import { AMOUNT_SCALE, linearScenario, saturableScenario } from './scenario.ts';

const what = process.argv[2] ?? 'dop853';
const rtol = Number(process.argv[3] ?? '1e-8');
const seconds = Number(process.argv[4] ?? '5');
const atol = rtol * AMOUNT_SCALE;

let work: () => unknown;
if (what === 'odex') {
  const p = prepare(linearScenario({ method: 'exact' }));
  work = () => runOdex(p.schedule, p.rows, rtol, atol);
} else if (what === 'saturable') {
  work = () => simulate(saturableScenario({ method: 'auto' }));
} else if (what === 'simulate-exact') {
  work = () => simulate(linearScenario({ method: 'exact' }));
} else if (what === 'exact' || what === 'dopri5' || what === 'dop853' || what === 'auto') {
  const p = prepare(linearScenario(what === 'exact' ? { method: 'exact' } : { method: what, rtol, atol }));
  work = () => runEngine(p);
} else {
  throw new Error(`unknown configuration '${what}'`);
}

const until = performance.now() + seconds * 1000;
let runs = 0;
while (performance.now() < until) {
  work();
  runs++;
}
console.log(`${what} rtol=${rtol}: ${runs} runs in ${seconds} s (${((seconds * 1000) / runs).toFixed(2)} ms/run)`);
