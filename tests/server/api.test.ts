// The HTTP API: every route and every error status, through supertest against the real
// app and a real worker pool; a simulation answered by the API equals the engine's own.
import { readFileSync } from 'node:fs';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { resultToJson } from '../../models/result/result-format.ts';
import { simulate } from '../../models/simulate.ts';
import { createApp, defaultServerLimits } from '../../server/app.ts';
import { loadSamples } from '../../server/samples.ts';
import { SimulationPool } from '../../server/worker-pool.ts';

const brennock = JSON.parse(readFileSync('samples/brennock-oral-bid.json', 'utf8')) as Record<string, unknown>;
let pool: SimulationPool;
let app: ReturnType<typeof createApp>;

beforeAll(() => {
  pool = new SimulationPool({ size: 2, timeBudgetMs: 4000, maxQueue: 8 });
  app = createApp({ pool, samples: loadSamples(), clientDir: null, limits: { ...defaultServerLimits, bodyLimit: '100kb', maxOutputPoints: 50_000, timeBudgetMs: 4000 } });
});
afterAll(async () => {
  await pool.close();
});

function noStack(body: unknown): void {
  expect(JSON.stringify(body)).not.toMatch(/\n\s+at |\.ts:\d+/);
}

describe('POST /api/simulate', () => {
  it('answers the engine result, equal to calling the engine directly', async () => {
    const res = await request(app).post('/api/simulate').send(brennock).expect(200);
    expect(res.headers['content-type']).toMatch(/application\/json/);
    const direct = simulate(brennock);
    if (!direct.ok) throw new Error('sample must simulate');
    // Same code, same input: the numbers must be identical, not merely close.
    const expected = JSON.parse(JSON.stringify(resultToJson(direct.value)));
    expect(res.body.times).toEqual(expected.times);
    expect(res.body.compartments.central.concentration).toEqual(expected.compartments.central.concentration);
    expect(res.body.metrics).toEqual(expected.metrics);
    expect(res.body.compartments.gut.concentration).toBeNull();
    expect(res.body.diagnostics.path).toBe('exact');
  });

  it('answers 400 with {path, message} problems for an invalid scenario', async () => {
    const bad = { ...brennock, doses: [{ into: 'tisue', amount: '100 mg' }] };
    const res = await request(app).post('/api/simulate').send(bad).expect(400);
    expect(res.body.problems).toEqual([
      { path: 'doses[0].into', message: "no compartment named 'tisue' (compartments are 'gut', 'central')" },
    ]);
    noStack(res.body);
  });

  it('answers 422 with the engine message on numerical failure', async () => {
    const failing = {
      title: 'step budget too small',
      compartments: [{ id: 'central', volume: 10 }],
      transfers: [{ from: 'central', vmax: 5, km: 0.5 }],
      doses: [{ into: 'central', amount: 100 }],
      output: { end: 2000, step: 10 },
      solver: { method: 'dopri5', maxSteps: 100, rtol: 1e-12, atol: 1e-14 },
    };
    const res = await request(app).post('/api/simulate').send(failing).expect(422);
    expect(res.body.problems[0].path).toBe('solver');
    expect(res.body.problems[0].message).toMatch(/numerical failure at t = .* in compartment 'central'/);
    noStack(res.body);
  });

  it('answers 400 naming output.step when more points are asked than the server serves', async () => {
    const many = { ...brennock, output: { end: '7 day', step: '1 s' } };
    const res = await request(app).post('/api/simulate').send(many).expect(400);
    expect(res.body.problems[0].path).toBe('output.step');
    expect(res.body.problems[0].message).toMatch(/at most 50000/);
  });

  it('answers 413 for a body over the limit', async () => {
    const huge = { ...brennock, description: 'x'.repeat(200_000) };
    const res = await request(app).post('/api/simulate').send(huge).expect(413);
    expect(res.body.problems[0].message).toMatch(/larger than this server accepts/);
  });

  it('answers 400 for a body that is not JSON', async () => {
    const res = await request(app).post('/api/simulate').set('content-type', 'application/json').send('{"title": ').expect(400);
    expect(res.body.problems[0].message).toMatch(/not valid JSON/);
    noStack(res.body);
  });

  it('stops a computation over the time budget with 422, and the pool keeps serving', async () => {
    // Heavy in time, light in memory (so no memory ceiling stops it first): a chain of 40
    // compartments dosed by two lines whose intervals (1 h, 1.0007 h) drift apart, so nearly
    // every piece between doses has its own length and its own 81 × 81 propagator. 200 doses
    // a line took 9.7 s on the command line, 1000 took 132 s: far past 4 s.
    const n = 40;
    const heavy = {
      title: 'heavy',
      compartments: Array.from({ length: n }, (_, i) => ({ id: `c${i}`, volume: `${5 + i} L` })),
      transfers: [
        ...Array.from({ length: n - 1 }, (_, i) => ({ from: `c${i}`, to: `c${i + 1}`, k: `${0.3 + 0.01 * i} 1/h` })),
        ...Array.from({ length: n - 1 }, (_, i) => ({ from: `c${i + 1}`, to: `c${i}`, k: `${0.05 + 0.001 * i} 1/h` })),
        { from: `c${n - 1}`, k: '0.1 1/h' },
      ],
      doses: [
        { into: 'c0', amount: '10 mg', every: '1 h', count: 1000 },
        { into: `c${n / 2}`, amount: '5 mg', every: '1.0007 h', count: 1000 },
      ],
      output: { end: '1000 h', step: '10 h' },
    };
    const light = request(app).post('/api/simulate').send(brennock);
    const [heavyRes, lightRes] = await Promise.all([request(app).post('/api/simulate').send(heavy), light]);
    expect(lightRes.status).toBe(200);
    expect(heavyRes.status).toBe(422);
    expect(heavyRes.body.problems[0].message).toMatch(/budget of 4 s/);
    await request(app).post('/api/simulate').send(brennock).expect(200);
  }, 30_000);
});

describe('other routes', () => {
  it('POST /api/validate: 200 for a valid scenario, 400 with paths otherwise', async () => {
    const ok = await request(app).post('/api/validate').send(brennock).expect(200);
    expect(ok.body).toMatchObject({ valid: true, compartments: 2, transfers: 2, administrations: 14, linear: true });
    const bad = await request(app)
      .post('/api/validate')
      .send({ ...brennock, compartments: [{ id: 'gut' }, { id: 'central', volume: '-42 L' }] })
      .expect(400);
    expect(bad.body.problems).toContainEqual({ path: 'compartments[1].volume', message: 'must be positive' });
    // The same output-point limit as /api/simulate, so "valid" means the server will run it.
    const many = await request(app).post('/api/validate').send({ ...brennock, output: { end: '7 day', step: '1 s' } }).expect(400);
    expect(many.body.problems[0].path).toBe('output.step');
  });

  it('GET /api/schema is the JSON Schema of the scenario', async () => {
    const res = await request(app).get('/api/schema').expect(200);
    expect(res.body.type).toBe('object');
    expect(Object.keys(res.body.properties)).toEqual(expect.arrayContaining(['compartments', 'transfers', 'doses', 'output', 'solver']));
  });

  it('GET /api/samples lists the bundled samples and /api/samples/:id returns one', async () => {
    const list = await request(app).get('/api/samples').expect(200);
    const ids = (list.body as { id: string }[]).map((s) => s.id);
    expect(ids).toContain('brennock-oral-bid');
    expect(ids.length).toBeGreaterThanOrEqual(5);
    const one = await request(app).get('/api/samples/brennock-oral-bid').expect(200);
    expect(one.body).toEqual(brennock);
    const missing = await request(app).get('/api/samples/nothing-here').expect(404);
    expect(missing.body.problems[0].message).toMatch(/no sample named 'nothing-here'/);
  });

  it('unknown routes answer 404 JSON', async () => {
    const api = await request(app).get('/api/unknown').expect(404);
    expect(api.body.problems[0].message).toMatch(/no API route GET \/api\/unknown/);
    const other = await request(app).get('/nowhere').expect(404);
    expect(other.headers['content-type']).toMatch(/application\/json/);
  });

  it('sends security headers with a Content-Security-Policy allowing only its own scripts and styles', async () => {
    const res = await request(app).get('/api/samples').expect(200);
    const csp = res.headers['content-security-policy'];
    expect(csp).toMatch(/default-src 'self'/);
    expect(csp).toMatch(/script-src 'self'(;|$)/);
    expect(csp).toMatch(/style-src 'self'(;|$)/);
    expect(csp).toMatch(/frame-ancestors 'none'/);
    expect(res.headers['x-content-type-options']).toBe('nosniff');
    expect(res.headers['x-powered-by']).toBeUndefined();
  });
});
