/**
 * POST /api/population's limits name the field that changes them: a `subjects` override past
 * the server's limit at the request's own `subjects`, the scenario's own count at
 * population.subjects (PopulationJobs.start answers 400 before any thread starts).
 */
import { readFileSync } from 'node:fs';
import { afterAll, describe, expect, it } from 'vitest';
import { defaultPopulationLimits, PopulationJobs } from '../../server/population-jobs.ts';

const demo = JSON.parse(readFileSync(new URL('../../samples/halvorin-population-infusion.json', import.meta.url), 'utf8'));

describe('subjects over the server limit', () => {
  const jobs = new PopulationJobs({ threads: 1, limits: { ...defaultPopulationLimits, maxSubjects: 100 } });
  afterAll(() => jobs.close());
  const scenario = () => {
    const s = JSON.parse(JSON.stringify(demo));
    delete s.population.regimens;
    s.population.subjects = 50;
    return s;
  };

  it('an override is named at the request field `subjects`', async () => {
    // 1,000,000 is past the scenario format's own bound (100,000) as well: still the request's field.
    for (const subjects of [101, 1_000_000]) {
      const answer = await jobs.start({ scenario: scenario(), subjects });
      expect(answer.status).toBe(400);
      if (answer.status === 202) return;
      expect(answer.problems.map((p) => p.path)).toContain('subjects');
      expect(answer.problems.map((p) => p.path)).not.toContain('population.subjects');
      expect(answer.problems.find((p) => p.path === 'subjects')?.message).toMatch(/this server runs at most 100 in one population/);
    }
  });

  it("the scenario's own count is named at population.subjects", async () => {
    const s = scenario();
    s.population.subjects = 101;
    const answer = await jobs.start({ scenario: s });
    expect(answer.status).toBe(400);
    if (answer.status !== 202) expect(answer.problems.map((p) => p.path)).toContain('population.subjects');
  });
});
