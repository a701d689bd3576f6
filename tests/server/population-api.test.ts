// The population API through supertest against the real app and real worker threads: a
// small population's answer equals the engine's own single-thread run (same code, same
// subjects' numbers, so equal, not merely close); progress moves; a cancel stops the threads;
// the server's limits and the engine's problems answer 400 with the field's JSON path.
import { spawnSync } from 'node:child_process';
import { readFileSync } from 'node:fs';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { simulatePopulation } from '../../models/population/population.ts';
import { createApp, defaultServerLimits, populationJobsOf } from '../../server/app.ts';
import { defaultPopulationLimits } from '../../server/population-jobs.ts';
import { loadSamples } from '../../server/samples.ts';
import { SimulationPool, type WorkerModule } from '../../server/worker-pool.ts';

const builtPopulationWorker: WorkerModule = { kind: 'built', url: new URL('../../dist/server/population-worker.js', import.meta.url) };

type Scenario = Record<string, any>;
const halvorin = JSON.parse(readFileSync('samples/halvorin-population-infusion.json', 'utf8')) as Scenario;
const limits = { ...defaultServerLimits, timeBudgetMs: 30_000 };

let pool: SimulationPool;
let app: ReturnType<typeof createApp>;

beforeAll(() => {
  // The population threads run the built worker, as the built server does: from the sources
  // every thread would compile the engine through tsx first, seconds per run. Built if stale.
  const build = spawnSync('node', ['scripts/build-server.mjs', '--if-stale', '--quiet'], { encoding: 'utf8', timeout: 180_000 });
  expect(build.status, build.stderr).toBe(0);
  pool = new SimulationPool({ size: 2, timeBudgetMs: 30_000, maxQueue: 8 });
  app = createApp({ pool, samples: loadSamples(), clientDir: null, limits, population: { worker: builtPopulationWorker } });
}, 180_000);
afterAll(async () => {
  await populationJobsOf(app)?.close();
  await pool.close();
});

function copy(): Scenario {
  return structuredClone(halvorin);
}

type State = { state: string; done?: number; total?: number; result?: any; problems?: { path: string; message: string }[] };

/** Polls a run until it leaves 'running'; every running state seen is kept for the progress check. */
async function until(a: typeof app, id: string, seen: State[] = []): Promise<State> {
  for (;;) {
    const res = await request(a).get(`/api/population/${id}`).expect(200);
    const body = res.body as State;
    if (body.state !== 'running') return body;
    seen.push(body);
    await new Promise((r) => setTimeout(r, 20));
  }
}

describe('POST /api/population', () => {
  it('runs a small population whose result equals simulatePopulation on the same input', async () => {
    const res = await request(app).post('/api/population').send({ scenario: halvorin, subjects: 40, seed: 7 }).expect(202);
    expect(typeof res.body.id).toBe('string');
    const end = await until(app, res.body.id);
    expect(end.state).toBe('done');
    const direct = simulatePopulation(halvorin, { subjects: 40, seed: 7 });
    if (!direct.ok) throw new Error('the sample must simulate');
    // Subject i's numbers depend only on (seed, i): the threads' split gives the same result, bit for bit
    // (engine's stated property); the JSON round trip is the one the API makes (NaN → null).
    expect(end.result).toEqual(JSON.parse(JSON.stringify(direct.value)));
    expect(end.result.subjects).toBe(40);
    expect(end.result.caution).toMatch(/not dosing advice/);
  }, 120_000);

  it('reports progress that moves from 0 towards the total, never backwards', async () => {
    const res = await request(app).post('/api/population').send({ scenario: halvorin, subjects: 600 }).expect(202);
    const seen: State[] = [];
    const end = await until(app, res.body.id, seen);
    expect(end.state).toBe('done');
    expect(seen.every((s) => s.total === 600)).toBe(true);
    const done = seen.map((s) => s.done as number);
    for (let k = 1; k < done.length; k++) expect(done[k]).toBeGreaterThanOrEqual(done[k - 1]);
    expect(done.some((d) => d > 0 && d < 600)).toBe(true);
  }, 180_000);

  it('refuses a second run while one runs (503), and a cancel stops the first and frees the threads', async () => {
    const res = await request(app).post('/api/population').send({ scenario: halvorin, subjects: 4000 }).expect(202);
    const id = res.body.id as string;
    // Wait until the threads are at work.
    for (;;) {
      const s = (await request(app).get(`/api/population/${id}`).expect(200)).body as State;
      expect(s.state).toBe('running');
      if ((s.done ?? 0) > 0) break;
      await new Promise((r) => setTimeout(r, 20));
    }
    const busy = await request(app).post('/api/population').send({ scenario: halvorin, subjects: 10 }).expect(503);
    expect(busy.body.problems[0].message).toMatch(/another population is running.*one runs at a time/);
    const cancelled = await request(app).delete(`/api/population/${id}`).expect(200);
    expect(cancelled.body).toEqual({ state: 'cancelled' });
    expect((await request(app).get(`/api/population/${id}`).expect(200)).body).toEqual({ state: 'cancelled' });
    // The threads are terminated: a new run is accepted straight away and completes.
    const next = await request(app).post('/api/population').send({ scenario: halvorin, subjects: 10 }).expect(202);
    expect((await until(app, next.body.id)).state).toBe('done');
    expect((await request(app).get(`/api/population/${id}`).expect(200)).body).toEqual({ state: 'cancelled' });
  }, 180_000);

  it('answers 404 for a run it does not keep', async () => {
    const res = await request(app).get('/api/population/no-such-run').expect(404);
    expect(res.body.problems[0].message).toMatch(/no population run/);
    await request(app).delete('/api/population/no-such-run').expect(404);
  });
});

describe('POST /api/population: limits and problems', () => {
  it('answers 400 naming subjects, output.step and population.regimens past the limits', async () => {
    const small = createApp({ pool, samples: [], clientDir: null, limits, population: { limits: { maxSubjects: 100, maxNumbers: 50_000, maxRegimenRuns: 300 } } });
    // The request's own override is named where it was given: `subjects`, not the scenario's count.
    const subjects = await request(small).post('/api/population').send({ scenario: halvorin, subjects: 101 }).expect(400);
    const paths = subjects.body.problems.map((p: { path: string }) => p.path);
    expect(paths).toContain('subjects');
    expect(subjects.body.problems.find((p: { path: string }) => p.path === 'subjects').message).toMatch(/at most 100/);
    // 100 subjects × 385 times × 2 compartments = 77,000 > 50,000; 8 regimens × 100 = 800 > 300.
    const grid = await request(small).post('/api/population').send({ scenario: halvorin, subjects: 100 }).expect(400);
    expect(grid.body.problems).toEqual([
      { path: 'output.step', message: expect.stringMatching(/= 77,000 concentrations; this server holds at most 50,000/) },
      { path: 'population.regimens', message: expect.stringMatching(/8 regimens × 100 subjects = 800 runs/) },
    ]);
    expect(defaultPopulationLimits).toMatchObject({ maxSubjects: 5000, maxNumbers: 20_000_000, maxRegimenRuns: 50_000, timeBudgetMs: 120_000, keepResults: 4 });
    // The scenario's own count is checked as well as an override.
    const own = copy();
    own.population.subjects = 1000;
    delete own.population.regimens;
    const ownRes = await request(small).post('/api/population').send({ scenario: own }).expect(400);
    expect(ownRes.body.problems.map((p: { path: string }) => p.path)).toEqual(['population.subjects', 'output.step']);
  });

  it('stops a run past its time budget and reports it as failed with the reason', async () => {
    const hasty = createApp({ pool, samples: [], clientDir: null, limits, population: { worker: builtPopulationWorker, limits: { timeBudgetMs: 1 } } });
    const res = await request(hasty).post('/api/population').send({ scenario: halvorin, subjects: 200 }).expect(202);
    const end = await until(hasty, res.body.id);
    expect(end).toEqual({ state: 'failed', problems: [{ path: 'population', message: expect.stringMatching(/longer than this server's budget of 0 s and was stopped/) }] });
  }, 60_000);

  it('answers 400 with the path for a correlation matrix that is not positive definite', async () => {
    const s = copy();
    s.compartments[1].volume = { typical: '24 L', cv: '20%', name: 'V2' };
    // Pairwise 0.9, 0.9 and −0.9 cannot hold together (the determinant is negative).
    s.population.correlations = [
      { between: ['CL', 'V1'], value: 0.9 },
      { between: ['CL', 'V2'], value: 0.9 },
      { between: ['V1', 'V2'], value: -0.9 },
    ];
    const res = await request(app).post('/api/population').send({ scenario: s, subjects: 20 }).expect(400);
    expect(res.body.problems).toHaveLength(1);
    expect(res.body.problems[0].path).toMatch(/^population\.correlations\[\d\]\.value$/);
    expect(res.body.problems[0].message).toMatch(/not positive definite/);
  });

  it('answers 400 with the path for a negative cv and for a target on an unknown compartment', async () => {
    const negative = copy();
    negative.transfers[0].cl.cv = '-10%';
    const a = await request(app).post('/api/population').send({ scenario: negative, subjects: 20 }).expect(400);
    expect(a.body.problems).toEqual([{ path: 'transfers[0].cl.cv', message: expect.stringMatching(/must not be negative/) }]);
    const unknown = copy();
    unknown.population.targets[0].compartment = 'brain';
    const b = await request(app).post('/api/population').send({ scenario: unknown, subjects: 20 }).expect(400);
    expect(b.body.problems).toEqual([{ path: 'population.targets[0].compartment', message: "no compartment named 'brain'" }]);
  });

  it('answers 400 for a request without a scenario, a scenario without a population, or bad overrides', async () => {
    const none = await request(app).post('/api/population').send({ subjects: 20 }).expect(400);
    expect(none.body.problems[0].path).toBe('scenario');
    const { population: _p, ...plain } = copy();
    const noPopulation = await request(app).post('/api/population').send({ scenario: plain }).expect(400);
    expect(noPopulation.body.problems[0].path).toBe('population');
    const bad = await request(app).post('/api/population').send({ scenario: halvorin, subjects: 2.5, seed: -1 }).expect(400);
    expect(bad.body.problems.map((p: { path: string }) => p.path)).toEqual(['subjects', 'seed']);
  });

  it('applies the same origin and JSON checks as the other POST routes', async () => {
    await request(app).post('/api/population').set('Origin', 'http://evil.example').send({ scenario: halvorin }).expect(403);
    await request(app).post('/api/population').set('Sec-Fetch-Site', 'cross-site').send({ scenario: halvorin }).expect(403);
    await request(app).post('/api/population').set('Content-Type', 'text/plain').send('{}').expect(415);
    await request(app).delete('/api/population/x').set('Sec-Fetch-Site', 'cross-site').expect(403);
  });
});

describe('runThreads: when the calling thread computes', () => {
  it('starts no worker for a small population unless asked, and the numbers do not depend on it', async () => {
    const { planPopulation, summarise } = await import('../../models/population/population.ts');
    const { runThreads, workersWorthIt } = await import('../../server/population-threads.ts');
    const scenario: Scenario = { ...copy(), output: { end: '48 h', step: '1 h' } };
    scenario.population = { ...scenario.population, subjects: 40, regimens: undefined };
    const plan = planPopulation(scenario);
    if (!plan.ok) throw new Error(JSON.stringify(plan.problems));
    const run = (workersAtOnce: boolean) => runThreads(scenario, {}, 40, { threads: 2, plan: plan.value, bands: true, worker: builtPopulationWorker, workersAtOnce });
    const alone = await run(false);
    const both = await run(true);
    if (!alone.ok || !both.ok) throw new Error('population failed');
    // 40 subjects take the calling thread well under the quarter second before a worker is considered.
    expect(alone.threadsUsed).toBe(1);
    expect(both.threadsUsed).toBe(2);
    const a = summarise(plan.value, alone.value, alone.computed);
    const b = summarise(plan.value, both.value, both.computed);
    expect(a.ok && b.ok).toBe(true);
    if (a.ok && b.ok) expect(b.value).toEqual(a.value);
    // The rule itself: past the warm-up and over two seconds left, and only then.
    expect([workersWorthIt(300, 2500), workersWorthIt(100, 9000), workersWorthIt(300, 1500)]).toEqual([true, false, false]);
  }, 60_000);

  it('judges the work left at the median rate of the last three chunks: one slow chunk is ignored, a slowing trend is followed', async () => {
    const { recentRate } = await import('../../server/population-threads.ts');
    expect(recentRate([2])).toBe(2);
    expect(recentRate([2, 1])).toBe(1);
    // A busy moment of the host: one chunk five times slower among warm ones.
    expect(recentRate([3, 0.4, 0.4, 2, 0.4])).toBe(0.4);
    // Subjects that grow slower as the run goes on (a table sorted by weight, say).
    expect(recentRate([0.4, 0.4, 0.8, 1.6, 3.2])).toBe(1.6);
  });
});
