// POST /api/propose with propose.basis "population" through supertest against the real app and
// worker pool: the answer equals the core called directly, and bad input is a 400 naming its path.
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { proposeByBasis } from '../../models/regimen/propose-basis.ts';
import { createApp, defaultServerLimits } from '../../server/app.ts';
import { populationProposalLimits } from '../../server/propose-cli.ts';
import { SimulationPool } from '../../server/worker-pool.ts';

let pool: SimulationPool;
let app: ReturnType<typeof createApp>;

beforeAll(() => {
  pool = new SimulationPool({ size: 1, timeBudgetMs: 20_000, maxQueue: 8 });
  app = createApp({ pool, samples: [], clientDir: null, limits: { ...defaultServerLimits, timeBudgetMs: 20_000 } });
});
afterAll(async () => {
  await pool.close();
});

const scenario = (population: Record<string, unknown> | null, propose: Record<string, unknown> = {}) => ({
  title: 'One compartment, infusion, clearance varying',
  compartments: [{ id: 'central', volume: '30 L' }],
  transfers: [{ from: 'central', cl: { typical: '4 L/h', cv: '40%', name: 'CL' } }],
  doses: [{ into: 'central', amount: '240 mg', every: '12 h', duration: '1 h', count: 4 }],
  output: { end: '48 h', step: '12 h' },
  ...(population ? { population } : {}),
  propose: { basis: 'population', amounts: ['200 mg', '400 mg'], maxUnits: 1, intervals: ['12 h', '24 h'], targets: [{ trough: { atLeast: '2 mg/L' } }, { peak: { atMost: '20 mg/L' } }], ...propose },
});

async function badPaths(body: object): Promise<string[]> {
  const res = await request(app).post('/api/propose').send(body).expect(400);
  expect(JSON.stringify(res.body)).not.toMatch(/\n\s+at |\.ts:\d+/);
  return (res.body.problems as { path: string }[]).map((p) => p.path);
}

describe('POST /api/propose, population basis', () => {
  it('answers the ranked population proposals, equal to the core', async () => {
    const body = scenario({ subjects: 40, seed: 3 });
    const res = await request(app).post('/api/propose').send(body).expect(200);
    const direct = proposeByBasis(body, populationProposalLimits);
    if (!direct.ok) throw new Error(JSON.stringify(direct.problems));
    expect(res.body).toEqual(JSON.parse(JSON.stringify(direct.value)));
    expect(res.body.population.subjects).toBe(40);
    expect(res.body.proposals[0].population.joint).toEqual({ probability: expect.any(Number), standardError: expect.any(Number), attained: expect.any(Number) });
  });
  it('answers 400 with the path: no population, an unknown basis, subjects and runs over the limits', async () => {
    expect(await badPaths(scenario(null))).toEqual(['propose.basis']);
    expect(await badPaths(scenario({ subjects: 40 }, { basis: 'all' }))).toEqual(['propose.basis']);
    expect(await badPaths(scenario({ subjects: populationProposalLimits.subjects + 1 }))).toEqual(['population.subjects']);
    // 4 regimens × 5000 subjects is within 50,000; 12 intervals × 2 amounts × 5000 is not.
    const many = ['6 h', '8 h', '12 h', '24 h', '36 h', '48 h'];
    expect(await badPaths(scenario({ subjects: 5000 }, { intervals: many }))).toEqual(['population.subjects']);
    const covariate = await badPaths(scenario({ subjects: 40, covariates: { weight: { distribution: 'uniform', min: '90 kg', max: '50 kg' } } }));
    expect(covariate).toEqual(['population.covariates.weight.max']);
  });
});
