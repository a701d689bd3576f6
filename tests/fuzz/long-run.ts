/**
 * `npm run fuzz [-- CASES [SEED]]`: the long fuzzing run of the API (default 10,000 cases,
 * a random seed, printed so a failure can be replayed). Exits 1 on the first defect.
 */
import { fuzzServer } from './server-fuzz.ts';

const cases = Number(process.argv[2] ?? 10_000);
const seed = Number(process.argv[3] ?? Math.floor(Math.random() * 2 ** 31));
console.log(`fuzzing the API with ${cases} mutated scenarios, seed ${seed}`);
const started = Date.now();
try {
  const summary = await fuzzServer({
    numRuns: cases,
    seed,
    budgetMs: 10_000,
    slackMs: 3000,
    promptMs: 8000,
    onProgress: (n) => {
      if (n % 500 === 0) console.log(`  ${n} cases, ${((Date.now() - started) / 1000).toFixed(0)} s`);
    },
  });
  console.log(`passed: ${summary.runs} cases in ${((Date.now() - started) / 1000).toFixed(0)} s`);
  console.log(`answers by status: ${JSON.stringify(summary.byStatus)}`);
  console.log(`slowest answer: ${summary.slowest.ms.toFixed(0)} ms`);
  console.log(`ordinary simulations after heavy cases: ${summary.ordinaryChecks}, slowest ${summary.ordinarySlowestMs.toFixed(0)} ms`);
  process.exit(0);
} catch (e) {
  console.error(e instanceof Error ? `${e.message}\n${(e as Error & { cause?: unknown }).cause ?? ""}` : String(e));
  console.error(`replay with: npm run fuzz -- ${cases} ${seed}`);
  process.exit(1);
}
