// Hardening of the HTTP boundary (issue 8): deeply nested bodies, cross-site and
// non-JSON posts, foreign Host names, oversized answers. supertest against the real app
// and a real worker pool. Time bounds here bound a stall (the pool's budget is 30 s),
// they do not measure speed.
import { readFileSync } from 'node:fs';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { allowedHostsFor, createApp, defaultServerLimits, hostNameOf, nestsDeeperThan, type ServerLimits } from '../../server/app.ts';
import { loadSamples } from '../../server/samples.ts';
import { SimulationPool } from '../../server/worker-pool.ts';

const brennock = JSON.parse(readFileSync('samples/brennock-oral-bid.json', 'utf8')) as Record<string, unknown>;
const nested = (depth: number) => '['.repeat(depth) + ']'.repeat(depth);
const testLimits: ServerLimits = { ...defaultServerLimits, bodyLimit: '2mb', timeBudgetMs: 30_000 };

function expectProblems(body: unknown): { path: string; message: string }[] {
  const problems = (body as { problems?: unknown }).problems;
  expect(Array.isArray(problems)).toBe(true);
  for (const p of problems as { path: unknown; message: unknown }[]) {
    expect(typeof p.path).toBe('string');
    expect(typeof p.message).toBe('string');
  }
  expect(JSON.stringify(body)).not.toMatch(/\n\s+at |\.ts:\d+/);
  return problems as { path: string; message: string }[];
}

describe('a deeply nested body', () => {
  // A fresh pool: the first posts arrive before the workers are ready, which is when the
  // clone's stack overflow used to be thrown from the ready event and end the process.
  let pool: SimulationPool;
  let app: ReturnType<typeof createApp>;
  beforeAll(() => {
    pool = new SimulationPool({ size: 2, timeBudgetMs: 30_000, maxQueue: 8 });
    app = createApp({ pool, samples: loadSamples(), clientDir: null, limits: testLimits });
  });
  afterAll(async () => {
    await pool.close();
  });

  it('is refused with 400 on every POST route, and the pool answers the next simulation promptly', async () => {
    const body = nested(5000); // 10 KB, the size of the reported crash
    const postNestedEverywhere = async () => {
      for (const route of ['/api/simulate', '/api/validate', '/api/report']) {
        for (let i = 0; i < 2; i++) {
          const res = await request(app).post(route).set('content-type', 'application/json').send(body).expect(400);
          expect(res.headers['content-type']).toMatch(/application\/json/);
          const problems = expectProblems(res.body);
          expect(problems[0].message).toMatch(/nest.*deep.*at most 64/);
        }
      }
    };
    await postNestedEverywhere(); // while the workers start
    await request(app).post('/api/simulate').send(brennock).expect(200);
    await postNestedEverywhere(); // and once they are warm
    const started = Date.now();
    await request(app).post('/api/simulate').send(brennock).expect(200);
    // A slot left busy would hold this request until the 30 s budget kills its worker.
    expect(Date.now() - started).toBeLessThan(10_000);
  }, 60_000);

  it('is refused at any depth the body limit allows, without recursion', async () => {
    const res = await request(app).post('/api/simulate').set('content-type', 'application/json').send(nested(900_000)).expect(400);
    expectProblems(res.body);
  }, 30_000);

  it('accepts a body 64 levels deep (the boundary is the limit, not less)', async () => {
    // 64 levels: the scenario is wrong (an array), so normalisation answers, not the depth check.
    const res = await request(app).post('/api/validate').set('content-type', 'application/json').send(nested(64)).expect(400);
    expect(expectProblems(res.body)[0].message).not.toMatch(/nest/);
    const deeper = await request(app).post('/api/validate').set('content-type', 'application/json').send(nested(65)).expect(400);
    expect(expectProblems(deeper.body)[0].message).toMatch(/nest/);
  });
});

describe('the pool given a job it cannot post', () => {
  it('answers that job with a JSON problem, keeps the slot free, and throws nothing', async () => {
    const pool = new SimulationPool({ size: 1, timeBudgetMs: 30_000, maxQueue: 8 });
    try {
      // Queued before the worker is ready: posted from its ready event.
      const deep = JSON.parse(nested(200_000)) as unknown;
      const early = await pool.run({ kind: 'simulate', scenario: deep, maxOutputPoints: 1000 });
      expect(early.status).toBe(400);
      // Answered from the ready event, so the worker is loaded: the time below is a stall's alone.
      expectProblems(JSON.parse(early.body as string));
      const warm = await pool.run({ kind: 'validate', scenario: deep, maxOutputPoints: 1000 });
      expect(warm.status).toBe(400);
      const started = Date.now();
      const ok = await pool.run({ kind: 'simulate', scenario: brennock, maxOutputPoints: 100_000 });
      expect(ok.status).toBe(200);
      expect(Date.now() - started).toBeLessThan(10_000);
    } finally {
      await pool.close();
    }
  }, 60_000);
});

describe('cross-site and non-JSON posts, foreign hosts', () => {
  let pool: SimulationPool;
  let app: ReturnType<typeof createApp>;
  beforeAll(() => {
    pool = new SimulationPool({ size: 1, timeBudgetMs: 30_000, maxQueue: 8 });
    app = createApp({ pool, samples: loadSamples(), clientDir: null, limits: testLimits });
  });
  afterAll(async () => {
    await pool.close();
  });

  it('answers 415 for a body that is not application/json', async () => {
    for (const type of ['text/plain', 'application/x-www-form-urlencoded', 'multipart/form-data; boundary=x']) {
      const res = await request(app).post('/api/simulate').set('content-type', type).send(JSON.stringify(brennock)).expect(415);
      expect(expectProblems(res.body)[0].message).toMatch(/application\/json/);
    }
    const none = await request(app).post('/api/validate').send(Buffer.from(JSON.stringify(brennock))).unset('content-type').expect(415);
    expectProblems(none.body);
    // With a charset, it is JSON all the same.
    await request(app).post('/api/validate').set('content-type', 'application/json; charset=utf-8').send(JSON.stringify(brennock)).expect(200);
  });

  it('answers 403 for a POST from another origin, and serves its own', async () => {
    for (const route of ['/api/simulate', '/api/validate', '/api/report']) {
      const foreign = await request(app).post(route).set('origin', 'http://evil.example').send(brennock).expect(403);
      expect(expectProblems(foreign.body)[0].message).toMatch(/origin/i);
    }
    // Same name, another port: another origin.
    await request(app).post('/api/validate').set('host', '127.0.0.1:8750').set('origin', 'http://127.0.0.1:9999').send(brennock).expect(403);
    await request(app).post('/api/validate').set('host', '127.0.0.1:8750').set('origin', 'null').send(brennock).expect(403);
    const crossSite = await request(app).post('/api/validate').set('sec-fetch-site', 'cross-site').send(brennock).expect(403);
    expectProblems(crossSite.body);
    // What the page sends: its own origin, same-origin fetch metadata, application/json.
    await request(app)
      .post('/api/validate')
      .set('host', '127.0.0.1:8750')
      .set('origin', 'http://127.0.0.1:8750')
      .set('sec-fetch-site', 'same-origin')
      .set('content-type', 'application/json')
      .send(JSON.stringify(brennock))
      .expect(200);
    await request(app).post('/api/validate').set('host', 'localhost:8750').set('origin', 'http://LOCALHOST:8750').send(brennock).expect(200);
  });

  it('answers only for loopback names by default (DNS rebinding), on every route', async () => {
    for (const host of ['evil.example', 'evil.example:8750', '127.0.0.1.evil.example', 'localhost.evil.example:80', '10.0.0.1:8750']) {
      const res = await request(app).get('/api/samples').set('host', host).expect(421);
      expect(expectProblems(res.body)[0].message).toMatch(/localhost/);
      await request(app).post('/api/validate').set('host', host).send(brennock).expect(421);
      await request(app).get('/').set('host', host).expect(421);
    }
    for (const host of ['localhost', 'localhost:8750', '127.0.0.1:1', '[::1]:8750', 'LocalHost:3000']) {
      await request(app).get('/api/samples').set('host', host).expect(200);
    }
  });

  it('answers for the configured names when the options list them', async () => {
    const named = createApp({ pool, samples: loadSamples(), clientDir: null, limits: testLimits, allowedHosts: ['localhost', 'tidemark.lab'] });
    await request(named).get('/api/samples').set('host', 'tidemark.lab:8750').expect(200);
    await request(named).get('/api/samples').set('host', '127.0.0.1:8750').expect(421);
    await request(named).post('/api/validate').set('host', 'tidemark.lab:8750').set('origin', 'http://tidemark.lab:8750').send(brennock).expect(200);
  });
});

describe('the boundary helpers', () => {
  it('read the host name of a Host header', () => {
    expect(hostNameOf('LocalHost:8750')).toBe('localhost');
    expect(hostNameOf('[::1]:8750')).toBe('[::1]');
    expect(hostNameOf('[::1]')).toBe('[::1]');
    expect(hostNameOf('127.0.0.1')).toBe('127.0.0.1');
  });

  it('list the names a server answers for from HOST and ALLOWED_HOSTS', () => {
    expect(allowedHostsFor('127.0.0.1')).toEqual(['localhost', '127.0.0.1', '[::1]']);
    expect(allowedHostsFor('::1')).toEqual(['localhost', '127.0.0.1', '[::1]']);
    expect(allowedHostsFor('192.168.1.20')).toEqual(['localhost', '127.0.0.1', '[::1]', '192.168.1.20']);
    expect(allowedHostsFor('0.0.0.0')).toBe('any');
    expect(allowedHostsFor('0.0.0.0', 'tidemark.lab, Lab-Box:8750')).toEqual(['localhost', '127.0.0.1', '[::1]', 'tidemark.lab', 'lab-box']);
  });

  it('measure nesting by levels of arrays and objects, scalars not counted', () => {
    expect(nestsDeeperThan(5, 0)).toBe(false);
    expect(nestsDeeperThan({ a: [1, { b: 'x' }] }, 3)).toBe(false);
    expect(nestsDeeperThan({ a: [1, { b: 'x' }] }, 2)).toBe(true);
    expect(nestsDeeperThan(JSON.parse(nested(64)), 64)).toBe(false);
    expect(nestsDeeperThan(JSON.parse(nested(65)), 64)).toBe(true);
  });
});

describe('the size of an answer', () => {
  let pool: SimulationPool;
  let app: ReturnType<typeof createApp>;
  beforeAll(() => {
    pool = new SimulationPool({ size: 1, timeBudgetMs: 30_000, maxQueue: 8 });
    app = createApp({ pool, samples: loadSamples(), clientDir: null, limits: testLimits });
  });
  afterAll(async () => {
    await pool.close();
  });

  // The reported case: a few hundred bytes asking for 100k doses and a 200k-point grid
  // (about 65 MB of JSON and seconds of work before this bound).
  const manyDoses = { ...brennock, doses: [{ ...(brennock.doses as object[])[0], every: '0.1 h', count: 100_000 }], output: { end: '9990 h', step: '0.05 h' } };

  it('is bounded before the work: 422 naming doses and the limit', async () => {
    const res = await request(app).post('/api/simulate').send(manyDoses).expect(422);
    const problems = expectProblems(res.body);
    expect(problems[0].path).toBe('doses');
    expect(problems[0].message).toContain(`at most ${testLimits.maxResponseBytes / 2 ** 20} MB`);
    // Refused from the schedule's size ("about"), not measured after simulating ("came to").
    expect(problems[0].message).toMatch(/\d+ administrations with \d+ reported rows × 4 columns make an answer of about [\d.]+ MB/);
    // /api/validate never simulates, and refuses it the same way.
    const validate = await request(app).post('/api/validate').send(manyDoses).expect(422);
    expect(expectProblems(validate.body)[0].path).toBe('doses');
  }, 30_000);

  it('names output.step when the grid alone is too large', async () => {
    // 180k reported times within the 200k point limit, over 13 compartments' series.
    const compartments = [{ id: 'gut' }, ...Array.from({ length: 12 }, (_, i) => ({ id: `c${i}`, volume: '10 L' }))];
    const transfers = [{ from: 'gut', to: 'c0', k: '1 1/h' }, ...Array.from({ length: 11 }, (_, i) => ({ from: `c${i}`, to: `c${i + 1}`, k: '0.5 1/h' })), { from: 'c11', k: '0.2 1/h' }];
    const wide = { title: 'wide', compartments, transfers, doses: [{ into: 'gut', amount: '100 mg' }], output: { end: '180000 min', step: '1 min' } };
    const res = await request(app).post('/api/simulate').send(wide).expect(422);
    const problems = expectProblems(res.body);
    expect(problems[0].path).toBe('output.step');
    expect(problems[0].message).toMatch(/180001 reported times × 26 columns/);
  }, 30_000);

  it('states the limit in /api/limits', async () => {
    const res = await request(app).get('/api/limits').expect(200);
    expect(res.body.responseBytes).toBe(testLimits.maxResponseBytes);
    expect(res.body.nestingDepth).toBe(64);
  });

  it('still answers the demo in full', async () => {
    const res = await request(app).post('/api/simulate').send(brennock).expect(200);
    expect(res.body.times.length).toBeGreaterThan(600);
  });
});
