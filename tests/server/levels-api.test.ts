// The measured-levels routes (/api/nca, /api/fit, /api/propose) through supertest against the
// real app and a real worker pool: one success each, equal to the core called directly (same
// code, same input: identical numbers), and the bad input answered 400 with its path.
import { readFileSync } from 'node:fs';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { fitScenario } from '../../models/fitting/fit.ts';
import { ncaOfModel } from '../../models/levels/nca-scenario.ts';
import { proposeRegimens } from '../../models/regimen/propose.ts';
import { normaliseScenario } from '../../models/scenario/normalize.ts';
import { createApp, defaultServerLimits } from '../../server/app.ts';
import { SimulationPool } from '../../server/worker-pool.ts';

type Json = Record<string, unknown>;
const sample = (name: string) => JSON.parse(readFileSync(`samples/${name}.json`, 'utf8')) as Json;
const levels = sample('orvanix-levels');
const fitSample = sample('orvanix-fit');
const proposeSample = sample('orvanix-propose');
const observations = levels.observations as Json[];

let pool: SimulationPool;
let app: ReturnType<typeof createApp>;

beforeAll(() => {
  pool = new SimulationPool({ size: 2, timeBudgetMs: 10_000, maxQueue: 8 });
  app = createApp({ pool, samples: [], clientDir: null, limits: { ...defaultServerLimits, timeBudgetMs: 10_000 } });
});
afterAll(async () => {
  await pool.close();
});

function noStack(body: unknown): void {
  expect(JSON.stringify(body)).not.toMatch(/\n\s+at |\.ts:\d+/);
}

/** The paths of a 400 answer's problems. */
async function badPaths(route: string, body: object): Promise<string[]> {
  const res = await request(app).post(route).send(body).expect(400);
  noStack(res.body);
  for (const p of res.body.problems as { path: string; message: string }[]) expect(p.message.length).toBeGreaterThan(10);
  return (res.body.problems as { path: string }[]).map((p) => p.path);
}

const withObservation = (base: Json, i: number, change: Json) => ({ ...base, observations: observations.map((o, k) => (k === i ? { ...o, ...change } : o)) });

describe('POST /api/nca', () => {
  it('answers the profiles and summary of the scenario, equal to the core', async () => {
    const res = await request(app).post('/api/nca').send(levels).expect(200);
    const model = normaliseScenario(levels);
    if (!model.ok) throw new Error('sample must read');
    const direct = ncaOfModel(model.value);
    if (!direct.ok) throw new Error('sample must give an NCA');
    expect(res.body).toEqual(JSON.parse(JSON.stringify(direct.value)));
    expect(res.body.route).toBe('extravascular');
    // Twice daily: the last interval with two levels is the third dose's (the trough at 23.75 h, the peak at 26.08 h);
    // the levels after its end lie under later doses and are named as left out.
    expect(res.body.profiles[0]).toMatchObject({ subject: 'P-017', compartment: 'central', interval: 12, doseNumber: 3, paths: ['observations[2]', 'observations[3]'] });
    expect(res.body.profiles[0].leftOut.map((l: { path: string }) => l.path)).toEqual(['observations[0]', 'observations[1]', 'observations[4]', 'observations[5]']);
    expect(res.body.notes.at(-1)).toMatch(/not dosing advice/);
  });

  it('answers 400 with the path for the issue\'s bad levels', async () => {
    expect(await badPaths('/api/nca', withObservation(levels, 0, { compartment: 'gut' }))).toContain('observations[0].compartment');
    expect(await badPaths('/api/nca', withObservation(levels, 1, { time: '2026-03-04T06:00' }))).toContain('observations[1].time');
    expect(await badPaths('/api/nca', withObservation(levels, 2, { concentration: '-1 mg/L' }))).toContain('observations[2].concentration');
    expect(await badPaths('/api/nca', { ...levels, observations: [] })).toEqual(['observations']);
    const rule = await request(app).post('/api/nca?rule=cubic').send(levels).expect(400);
    expect(rule.body.problems[0].path).toBe('rule');
  });

  it('honours the scenario\'s nca section (rule, a terminal line fixed by the user), ?rule= over it; a wrong entry is 400 with its path', async () => {
    const fixed = await request(app).post('/api/nca').send({ ...levels, nca: { rule: 'linear', terminal: [{ subject: 'P-017', from: '2026-03-05T08:00' }] } }).expect(200);
    expect(fixed.body.rule).toBe('linear');
    // 24 h after the clock origin; the interval's levels after Cmax (the peak, 26.08 h) are none, so the line is flagged, not chosen.
    expect(fixed.body.profiles[0].terminalFixed).toEqual({ path: 'nca.terminal[0]', from: 24 });
    expect(fixed.body.profiles[0].result.flags.map((f: { message: string }) => f.message)).toContainEqual(expect.stringMatching(/^nca\.terminal\[0\]\.from \(24 h\) leaves no level/));
    const asked = await request(app).post('/api/nca?rule=log-down').send({ ...levels, nca: { rule: 'linear' } }).expect(200);
    expect(asked.body.rule).toBe('linear-up-log-down');
    expect(await badPaths('/api/nca', { ...levels, nca: { terminal: [{ subject: 'P-999', from: '96 h' }, { compartment: 'central', from: 'next week' }] } })).toEqual(['nca.terminal[0].subject', 'nca.terminal[1].from']);
    expect(await badPaths('/api/nca', { ...levels, nca: { terminal: [{ from: '2026-03-04T07:00' }] } })).toEqual(['nca.terminal[0].from']);
    expect(await badPaths('/api/nca', { ...levels, nca: { rule: 'cubic' } })).toEqual(['nca.rule']);
  });

  it('keeps the app\'s checks: another site 403, not JSON 415', async () => {
    await request(app).post('/api/nca').set('Sec-Fetch-Site', 'cross-site').send(levels).expect(403);
    await request(app).post('/api/nca').set('content-type', 'text/plain').send('{}').expect(415);
  });
});

describe('POST /api/fit', () => {
  it('answers estimates with standard errors, the objective, convergence, aligned predictions and the fitted scenario', async () => {
    const res = await request(app).post('/api/fit?objective=map').send(fitSample).expect(200);
    const direct = fitScenario(fitSample, { objective: 'map', band: false });
    if (!direct.ok) throw new Error('sample must fit');
    for (const name of ['CL', 'V', 'ka']) {
      expect(res.body.estimates[name].value).toBe(direct.value.estimates[name].value);
      expect(res.body.estimates[name].standardError).toBe(direct.value.estimates[name].standardError);
    }
    expect(res.body.objective).toBe(direct.value.objective);
    expect(res.body.converged).toBe(true);
    expect(res.body.settings.objective).toBe('map');
    // One prediction per observation, in the scenario's order (the level below the limit not used).
    expect(res.body.predictions.map((p: { path: string }) => p.path)).toEqual(observations.map((_, i) => `observations[${i}]`));
    expect(res.body.predictions[5].used).toBe(false);
    // The fitted scenario simulates: it is checked by the validate route.
    await request(app).post('/api/validate').send(res.body.fittedScenario).expect(200);
    expect(res.body.caution).toMatch(/not dosing advice/);
  });

  it('answers 400 with the path for a quantity that does not exist, more quantities than levels, a bad objective', async () => {
    expect(await badPaths('/api/fit', { ...fitSample, fit: { estimate: ['CL', 'Q'] } })).toEqual(['fit.estimate[1]']);
    const twoLevels = { ...fitSample, observations: observations.slice(0, 2), fit: { estimate: ['CL', 'V', 'ka'], objective: 'wls' } };
    expect(await badPaths('/api/fit', twoLevels)).toEqual(['fit.estimate']);
    expect(await badPaths('/api/fit', { ...fitSample, fit: undefined })).toEqual(['fit']);
    const objective = await request(app).post('/api/fit?objective=least').send(fitSample).expect(400);
    expect(objective.body.problems[0].path).toBe('objective');
  });
});

describe('POST /api/propose', () => {
  it('answers the ranked proposals with the caution, equal to the core', async () => {
    const res = await request(app).post('/api/propose').send(proposeSample).expect(200);
    const direct = proposeRegimens(proposeSample);
    if (!direct.ok) throw new Error('sample must propose');
    expect(res.body).toEqual(JSON.parse(JSON.stringify(direct.value)));
    expect(res.body.proposals.length).toBeGreaterThan(0);
    expect(res.body.proposals[0].rank).toBe(1);
    expect(res.body.caution).toMatch(/not recommendations/);
  });

  it('answers 400 with the path for a scenario without the block and a bad interval', async () => {
    expect(await badPaths('/api/propose', { ...proposeSample, propose: undefined })).toEqual(['propose']);
    const block = proposeSample.propose as Json;
    expect(await badPaths('/api/propose', { ...proposeSample, propose: { ...block, intervals: ['-8 h'] } })).toContain('propose.intervals[0]');
  });
});
