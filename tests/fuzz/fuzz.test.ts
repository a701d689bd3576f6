// A small slice of the API fuzzing in every test run; `npm run fuzz` runs 10,000 cases.
// The seed is fixed here so the suite's time is steady; TIDEMARK_FUZZ_SEED picks another.
import { describe, expect, it } from 'vitest';
import { fuzzServer } from './server-fuzz.ts';

describe('fuzzed scenarios through the API', () => {
  it('answer a result whose mass balance holds or a list of problems, within the budget, and the pool stays prompt', async () => {
    const summary = await fuzzServer({
      numRuns: 60,
      seed: Number(process.env.TIDEMARK_FUZZ_SEED ?? 20261202),
      budgetMs: 4000,
      slackMs: 3000,
      promptMs: 8000,
    });
    expect(summary.runs).toBe(60);
  }, 240_000);
});
