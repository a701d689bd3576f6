// The store's HTTP API (store-api shapes, server/store/routes.ts and the recording in
// server/app.ts) through supertest against the real app, a real worker pool and a store on a
// temporary file: every route, its 400/404/409/503 answers with their paths, runs and reports
// recorded against the version they were made from, and concurrent saves through a
// listening server (one wins from a shared base, the rest get 409; nothing acknowledged is lost).
import { createHash } from 'node:crypto';
import { writeFileSync } from 'node:fs';
import type { AddressInfo } from 'node:net';
import { join } from 'node:path';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { diffJson } from '../../models/scenario/diff.ts';
import { scenarioFingerprint } from '../../models/scenario/fingerprint.ts';
import { createApp, defaultServerLimits } from '../../server/app.ts';
import { loadSamples } from '../../server/samples.ts';
import { StoreHandle } from '../../server/store/handle.ts';
import { storeFileName } from '../../server/store/location.ts';
import { storeLimits } from '../../server/store/records.ts';
import { SimulationPool, type WorkerModule } from '../../server/worker-pool.ts';
import { brennock, buildServer, removeFolder, repoRoot, sendJson, tempFolder, variant, type Scenario } from './temp-store.ts';

let pool: SimulationPool;
let folder: string;
let handle: StoreHandle;
let app: ReturnType<typeof createApp>;
const limits = { ...defaultServerLimits, timeBudgetMs: 20_000 };

beforeAll(() => {
  // The built simulation worker (built here when older than its sources), as the built server
  // runs it: from the sources each worker compiles the engine through tsx first, seconds each.
  buildServer();
  const worker: WorkerModule = { kind: 'built', url: new URL('dist/server/simulation-worker.js', `file://${repoRoot}`) };
  pool = new SimulationPool({ size: 2, timeBudgetMs: 20_000, maxQueue: 64, worker });
  folder = tempFolder();
  handle = new StoreHandle(join(folder, storeFileName));
  app = createApp({ pool, samples: loadSamples(), clientDir: null, limits, store: handle });
});
afterAll(async () => {
  handle.close();
  await pool.close();
  removeFolder(folder);
});

type Problem = { path: string; message: string };
const paths = (body: { problems?: Problem[] }) => (body.problems ?? []).map((p) => p.path);

function noStack(body: unknown): void {
  expect(JSON.stringify(body)).not.toMatch(/\n\s+at |\.ts:\d+/);
}

async function create(scenario: Scenario, extra: Record<string, unknown> = {}): Promise<number> {
  const res = await request(app).post('/api/scenarios').send({ scenario, ...extra }).expect(201);
  return res.body.id as number;
}

const invalid = (): Scenario => ({ ...brennock, doses: [{ into: 'tisue', amount: '100 mg' }] });

describe('GET /api/store', () => {
  it('says the store is available, with its file and schema', async () => {
    const res = await request(app).get('/api/store').expect(200);
    expect(res.body).toEqual({ available: true, file: join(folder, storeFileName), schemaVersion: 1, readOnly: false });
  });
});

describe('scenarios', () => {
  it('POST creates version 1 (201, Location), the name defaulting to the title; GET returns it', async () => {
    const res = await request(app).post('/api/scenarios').send({ scenario: brennock, tags: ['Oral', 'BID'], notes: 'n "1"', note: 'first', author: 'Ana' }).expect(201);
    expect(res.body).toEqual({ id: expect.any(Number), version: 1, fingerprint: scenarioFingerprint(brennock) });
    expect(res.headers.location).toBe(`/api/scenarios/${res.body.id}`);
    const got = await request(app).get(`/api/scenarios/${res.body.id}`).expect(200);
    expect(got.body).toMatchObject({ id: res.body.id, name: brennock.title, tags: ['Oral', 'BID'], notes: 'n "1"', latestVersion: 1, fingerprint: scenarioFingerprint(brennock), author: 'Ana', deleted: false });
    expect(got.body.version).toMatchObject({ version: 1, fingerprint: scenarioFingerprint(brennock), note: 'first', author: 'Ana', bytes: Buffer.byteLength(JSON.stringify(brennock)) });
    expect(got.body.created).toMatch(/^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d\.\d{3}Z$/);
    expect(got.body.scenario).toEqual(brennock);
  });

  it('POST refuses an invalid scenario with problems at scenario.… paths, and bad metadata at theirs; nothing is saved', async () => {
    const before = (await request(app).get('/api/scenarios?deleted=include').expect(200)).body.total as number;
    const bad = await request(app).post('/api/scenarios').send({ scenario: invalid() }).expect(400);
    expect(bad.body.problems).toEqual([{ path: 'scenario.doses[0].into', message: "no compartment named 'tisue' (compartments are 'gut', 'central')" }]);
    noStack(bad.body);
    expect(paths((await request(app).post('/api/scenarios').send({ scenario: 'not an object' }).expect(400)).body)[0]).toMatch(/^scenario/);
    expect(paths((await request(app).post('/api/scenarios').send({ scenario: brennock, name: 'x'.repeat(storeLimits.name + 1) }).expect(400)).body)).toEqual(['name']);
    expect(paths((await request(app).post('/api/scenarios').send({ scenario: brennock, tags: ['ok', 7] }).expect(400)).body)).toEqual(['tags[1]']);
    expect(paths((await request(app).post('/api/scenarios').send({ scenario: brennock, notes: 'x'.repeat(storeLimits.notes + 1) }).expect(400)).body)).toEqual(['notes']);
    // A lone surrogate arrives through a JSON \u escape; it would not survive SQLite's UTF-8.
    const lone = await request(app).post('/api/scenarios').set('content-type', 'application/json').send(`{"scenario": ${JSON.stringify(brennock)}, "name": "half \\ud800"}`).expect(400);
    expect(lone.body.problems).toEqual([{ path: 'name', message: expect.stringMatching(/lone surrogate/) }]);
    await request(app).post('/api/scenarios').set('content-type', 'text/plain').send('{}').expect(415);
    await request(app).post('/api/scenarios').set('content-type', 'application/json').send('{"scenario": ').expect(400);
    await request(app).post('/api/scenarios').set('Sec-Fetch-Site', 'cross-site').send({ scenario: brennock }).expect(403);
    expect((await request(app).get('/api/scenarios?deleted=include').expect(200)).body.total).toBe(before);
  });

  it('PUT saves the next version from the latest; a stale base is 409 with latestVersion; invalid is 400', async () => {
    const id = await create(variant(1));
    const saved = await request(app).put(`/api/scenarios/${id}`).send({ scenario: variant(2), baseVersion: 1, note: 'more' }).expect(200);
    expect(saved.body).toEqual({ id, version: 2, fingerprint: scenarioFingerprint(variant(2)) });
    const stale = await request(app).put(`/api/scenarios/${id}`).send({ scenario: variant(3), baseVersion: 1 }).expect(409);
    expect(stale.body.latestVersion).toBe(2);
    expect(stale.body.problems).toEqual([{ path: 'baseVersion', message: expect.stringMatching(/version 2 was saved after version 1/) }]);
    const bad = await request(app).put(`/api/scenarios/${id}`).send({ scenario: invalid(), baseVersion: 2 }).expect(400);
    expect(paths(bad.body)).toEqual(['scenario.doses[0].into']);
    expect(paths((await request(app).put(`/api/scenarios/${id}`).send({ scenario: variant(3) }).expect(400)).body)).toEqual(['baseVersion']);
    expect(paths((await request(app).put(`/api/scenarios/${id}`).send({ scenario: variant(3), baseVersion: 2, note: 'x'.repeat(storeLimits.note + 1) }).expect(400)).body)).toEqual(['note']);
    await request(app).put('/api/scenarios/999999').send({ scenario: variant(3), baseVersion: 1 }).expect(404);
    const versions = await request(app).get(`/api/scenarios/${id}/versions`).expect(200);
    expect(versions.body.versions.map((v: { version: number }) => v.version)).toEqual([2, 1]);
    expect(versions.body.versions[0]).toMatchObject({ note: 'more', fingerprint: scenarioFingerprint(variant(2)) });
  });

  it('GET of a version, a diff between two, and 404/400 for ids and versions that are not there', async () => {
    const id = await create(variant(1));
    await request(app).put(`/api/scenarios/${id}`).send({ scenario: variant(2), baseVersion: 1 }).expect(200);
    const one = await request(app).get(`/api/scenarios/${id}/versions/1`).expect(200);
    expect(one.body.scenario).toEqual(variant(1));
    expect(one.body).toMatchObject({ version: 1, fingerprint: scenarioFingerprint(variant(1)) });
    expect(one.body.json).toBeUndefined();
    const diff = await request(app).get(`/api/scenarios/${id}/diff?from=1&to=2`).expect(200);
    expect(diff.body).toEqual({ from: 1, to: 2, changes: JSON.parse(JSON.stringify(diffJson(variant(1), variant(2)))) });
    expect(diff.body.changes).toContainEqual({ path: 'doses[0].amount', change: 'changed', before: '101 mg', after: '102 mg' });
    expect(paths((await request(app).get(`/api/scenarios/${id}/diff?from=1&to=3`).expect(400)).body)).toEqual(['to']);
    expect(paths((await request(app).get(`/api/scenarios/${id}/diff?from=x&to=2`).expect(400)).body)).toEqual(['from']);
    for (const v of ['3', '0', 'x', '1.0']) await request(app).get(`/api/scenarios/${id}/versions/${v}`).expect(404);
    for (const bad of ['999999', '0', '-1', 'abc', '1e3', '01']) {
      const res = await request(app).get(`/api/scenarios/${bad}`).expect(404);
      expect(res.body.problems[0].message).toMatch(/there is no stored scenario/);
    }
    await request(app).get('/api/scenarios/999999/versions').expect(404);
    await request(app).get('/api/scenarios/999999/runs').expect(404);
    await request(app).get('/api/scenarios/999999/reports').expect(404);
    await request(app).get('/api/runs/999999').expect(404);
    await request(app).get('/api/runs/abc').expect(404);
  });

  it('PATCH changes name, tags and notes only; DELETE is soft and restore undoes it; the list filters and searches', async () => {
    const id = await create(variant(5), { name: 'Évora trial' });
    const patched = await request(app).patch(`/api/scenarios/${id}`).send({ name: 'Évora ÉTUDE', tags: ['Ørsted'], notes: 'line\nline' }).expect(200);
    expect(patched.body).toMatchObject({ id, name: 'Évora ÉTUDE', tags: ['Ørsted'], notes: 'line\nline', latestVersion: 1 });
    expect(paths((await request(app).patch(`/api/scenarios/${id}`).send({ scenario: brennock }).expect(400)).body)).toEqual(['']);
    expect(paths((await request(app).patch(`/api/scenarios/${id}`).send({ name: '' }).expect(400)).body)).toEqual(['name']);
    await request(app).patch('/api/scenarios/999999').send({ name: 'x' }).expect(404);
    const search = async (q: string) => (await request(app).get(`/api/scenarios?${q}`).expect(200)).body as { scenarios: { id: number }[]; total: number };
    expect((await search('search=%C3%A9tude')).scenarios.map((s) => s.id)).toEqual([id]); // étude
    expect((await search('search=%C3%98RSTED')).scenarios.map((s) => s.id)).toEqual([id]); // ØRSTED
    expect(await request(app).delete(`/api/scenarios/${id}`).expect(200).then((r) => r.body)).toEqual({ id, deleted: true });
    expect((await search('search=%C3%A9tude')).total).toBe(0);
    expect((await search('search=%C3%A9tude&deleted=include')).total).toBe(1);
    expect((await search('deleted=only')).scenarios.map((s) => s.id)).toEqual([id]);
    expect((await request(app).get(`/api/scenarios/${id}`).expect(200)).body.deleted).toBe(true);
    expect(await request(app).post(`/api/scenarios/${id}/restore`).expect(200).then((r) => r.body)).toEqual({ id, deleted: false });
    expect((await search('deleted=only')).total).toBe(0);
    await request(app).delete('/api/scenarios/999999').expect(404);
    await request(app).post('/api/scenarios/999999/restore').expect(404);
    await request(app).delete(`/api/scenarios/${id}`).set('Sec-Fetch-Site', 'cross-site').expect(403);
    expect(paths((await request(app).get('/api/scenarios?limit=abc').expect(400)).body)).toEqual(['limit']);
    expect(paths((await request(app).get('/api/scenarios?offset=-1').expect(400)).body)).toEqual(['offset']);
    const paged = await search('limit=1&offset=1&deleted=include');
    expect(paged.scenarios).toHaveLength(1);
    expect(paged.total).toBeGreaterThan(1);
  });
});

describe('runs and reports recorded against a stored version', () => {
  it('POST /api/simulate?scenario=&version= records the run (X-Tidemark-Run: id), or says why not', async () => {
    const id = await create(variant(1));
    await request(app).put(`/api/scenarios/${id}`).send({ scenario: variant(2), baseVersion: 1 }).expect(200);
    const res = await request(app).post(`/api/simulate?scenario=${id}&version=2`).send(variant(2)).expect(200);
    expect(res.headers['x-tidemark-run']).toMatch(/^[1-9]\d*$/);
    const run = await request(app).get(`/api/runs/${res.headers['x-tidemark-run']}`).expect(200);
    expect(run.body).toMatchObject({ id: Number(res.headers['x-tidemark-run']), scenarioId: id, version: 2, method: 'exact (matrix exponential)', warnings: [] });
    expect(run.body.result).toEqual(res.body); // the full result, as answered
    expect(run.body.startedAt).toMatch(/Z$/);
    expect(run.body.durationMs).toBeGreaterThanOrEqual(0);
    // Another body than the version named: answered, not recorded.
    const other = await request(app).post(`/api/simulate?scenario=${id}&version=2`).send(variant(1)).expect(200);
    expect(other.headers['x-tidemark-run']).toMatch(/^not recorded; the scenario sent \(fingerprint [0-9a-f]{12}\) is not scenario \d+ version 2/);
    expect((await request(app).post(`/api/simulate?scenario=${id}&version=7`).send(variant(2)).expect(200)).headers['x-tidemark-run']).toMatch(/^not recorded; there is no stored scenario/);
    expect((await request(app).post(`/api/simulate?scenario=${id}&version=x`).send(variant(2)).expect(200)).headers['x-tidemark-run']).toMatch(/^not recorded; give both/);
    expect((await request(app).post('/api/simulate').send(variant(2)).expect(200)).headers['x-tidemark-run']).toBeUndefined();
    const runs = await request(app).get(`/api/scenarios/${id}/runs`).expect(200);
    expect(runs.body.runs.map((r: { id: number; version: number }) => [r.id, r.version])).toEqual([[Number(res.headers['x-tidemark-run']), 2]]);
  });

  it('POST /api/report?scenario=&version=&by= records the PDF as sent (X-Tidemark-Report); another version is 409', async () => {
    const id = await create(variant(7), { name: 'reported' });
    const res = await request(app)
      .post(`/api/report?scenario=${id}&version=1&by=${encodeURIComponent('Dr. Ó')}`)
      .send(variant(7))
      .buffer(true)
      .parse((r, done) => {
        const chunks: Buffer[] = [];
        r.on('data', (c: Buffer) => chunks.push(c));
        r.on('end', () => done(null, Buffer.concat(chunks)));
      })
      .expect(200);
    const sent = res.body as Buffer;
    expect(sent.subarray(0, 5).toString('latin1')).toBe('%PDF-');
    const reportId = res.headers['x-tidemark-report'];
    expect(reportId).toMatch(/^[1-9]\d*$/);
    const pdf = await request(app).get(`/api/reports/${reportId}/pdf`).buffer(true).parse((r, done) => {
      const chunks: Buffer[] = [];
      r.on('data', (c: Buffer) => chunks.push(c));
      r.on('end', () => done(null, Buffer.concat(chunks)));
    }).expect(200);
    expect(pdf.headers['content-type']).toMatch(/application\/pdf/);
    expect((pdf.body as Buffer).equals(sent)).toBe(true);
    const sha256 = createHash('sha256').update(sent).digest('hex');
    const fingerprint = scenarioFingerprint(variant(7));
    const listed = await request(app).get(`/api/scenarios/${id}/reports`).expect(200);
    expect(listed.body.reports).toEqual([{ id: Number(reportId), scenarioId: id, name: 'reported', version: 1, fingerprint, sha256, issuedAt: expect.stringMatching(/Z$/), requestedBy: 'Dr. Ó', bytes: sent.length }]);
    const found = await request(app).get(`/api/reports?fingerprint=${fingerprint.toUpperCase()}`).expect(200);
    expect(found.body.reports.map((r: { id: number }) => r.id)).toEqual([Number(reportId)]);
    expect(found.body.versions).toEqual([expect.objectContaining({ scenarioId: id, version: 1, fingerprint })]);
    // A body that is not the version named: refused before a PDF is made, and nothing recorded.
    const wrong = await request(app).post(`/api/report?scenario=${id}&version=1`).send(variant(8)).expect(409);
    expect(wrong.body.problems).toEqual([{ path: 'scenario', message: expect.stringMatching(/is not scenario \d+ version 1/) }]);
    await request(app).post(`/api/report?scenario=${id}&version=9`).send(variant(7)).expect(404);
    expect(paths((await request(app).post(`/api/report?scenario=${id}&version=x`).send(variant(7)).expect(400)).body)).toEqual(['scenario']);
    expect((await request(app).get(`/api/scenarios/${id}/reports`).expect(200)).body.reports).toHaveLength(1);
    expect(paths((await request(app).get('/api/reports?fingerprint=xyz').expect(400)).body)).toEqual(['fingerprint']);
    await request(app).get('/api/reports/999999/pdf').expect(404);
  });
});

describe('a store that cannot be used', () => {
  it('answers 503 with the reason on every store route, says so on /api/store, and serves the rest', async () => {
    const badFolder = tempFolder();
    const file = join(badFolder, storeFileName);
    writeFileSync(file, Buffer.alloc(8192, 0x5a)); // not a database
    const broken = new StoreHandle(file);
    const brokenApp = createApp({ pool, samples: loadSamples(), clientDir: null, limits, store: broken });
    const bare = createApp({ pool, samples: loadSamples(), clientDir: null, limits });
    try {
      const status = await request(brokenApp).get('/api/store').expect(200);
      expect(status.body).toMatchObject({ available: false, file, readOnly: false });
      expect(status.body.message).toMatch(/damaged or is not a Tidemark database/);
      const calls: [string, string, unknown?][] = [
        ['get', '/api/scenarios'],
        ['post', '/api/scenarios', { scenario: brennock }],
        ['get', '/api/scenarios/1'],
        ['put', '/api/scenarios/1', { scenario: brennock, baseVersion: 1 }],
        ['patch', '/api/scenarios/1', { name: 'x' }],
        ['delete', '/api/scenarios/1'],
        ['post', '/api/scenarios/1/restore'],
        ['get', '/api/scenarios/1/versions'],
        ['get', '/api/scenarios/1/versions/1'],
        ['get', '/api/scenarios/1/diff?from=1&to=1'],
        ['get', '/api/scenarios/1/runs'],
        ['get', '/api/runs/1'],
        ['get', '/api/scenarios/1/reports'],
        ['get', '/api/reports?fingerprint=0123456789ab'],
        ['get', '/api/reports/1/pdf'],
        ['post', '/api/report?scenario=1&version=1', brennock],
      ];
      for (const [method, path, body] of calls) {
        const call = (request(brokenApp) as unknown as Record<string, (p: string) => request.Test>)[method](path);
        const res = await (body === undefined ? call : call.send(body as object));
        expect(res.status, `${method} ${path}`).toBe(503);
        expect(res.body.problems[0].message, `${method} ${path}`).toMatch(/damaged or is not a Tidemark database/);
        noStack(res.body);
        const without = (request(bare) as unknown as Record<string, (p: string) => request.Test>)[method](path);
        expect((await (body === undefined ? without : without.send(body as object))).status, `bare ${method} ${path}`).toBe(503);
      }
      const sim = await request(brokenApp).post('/api/simulate?scenario=1&version=1').send(brennock).expect(200);
      expect(sim.headers['x-tidemark-run']).toMatch(/^not recorded; the store .* is damaged/);
      expect((await request(brokenApp).get('/api/samples').expect(200)).body.length).toBeGreaterThan(0);
      expect((await request(bare).get('/api/store').expect(200)).body).toMatchObject({ available: false, message: 'this server was started without a store' });
    } finally {
      broken.close();
      removeFolder(badFolder);
    }
  });
});

describe('concurrent saves through a listening server', () => {
  it('from one base version: exactly one 200, the rest 409; then a burst of POSTs from several clients, all kept', async () => {
    const server = app.listen(0, '127.0.0.1');
    await new Promise((r) => server.once('listening', r));
    const base = `http://127.0.0.1:${(server.address() as AddressInfo).port}`;
    try {
      const id = (await sendJson(base, 'POST', '/api/scenarios', { scenario: variant(0, 'race') })).body.id as number;
      const n = 12;
      const answers = await Promise.all(Array.from({ length: n }, (_, k) => sendJson(base, 'PUT', `/api/scenarios/${id}`, { scenario: variant(k + 1, 'race'), baseVersion: 1, note: `client ${k}` })));
      const statuses = answers.map((a) => a.status).sort();
      expect(statuses).toEqual([200, ...Array<number>(n - 1).fill(409)]);
      const winner = answers.findIndex((a) => a.status === 200);
      expect(answers[winner].body).toMatchObject({ id, version: 2 });
      for (const a of answers) if (a.status === 409) expect(a.body.latestVersion).toBe(2);
      const stored = await request(app).get(`/api/scenarios/${id}/versions/2`).expect(200);
      expect(stored.body.scenario).toEqual(variant(winner + 1, 'race'));
      expect(stored.body.note).toBe(`client ${winner}`);
      expect((await request(app).get(`/api/scenarios/${id}/versions`).expect(200)).body.versions).toHaveLength(2);

      // Several clients, each posting new scenarios as fast as it can.
      const clients = 4;
      const each = 8;
      const posted = await Promise.all(
        Array.from({ length: clients }, async (_, c) => {
          const mine: { id: number; scenario: Scenario }[] = [];
          for (let k = 0; k < each; k++) {
            const scenario = variant(c * 100 + k, 'burst');
            const a = await sendJson(base, 'POST', '/api/scenarios', { scenario, name: `burst ${c}/${k}` });
            expect(a.status).toBe(201);
            mine.push({ id: a.body.id as number, scenario });
          }
          return mine;
        }),
      );
      const all = posted.flat();
      expect(new Set(all.map((p) => p.id)).size).toBe(clients * each);
      for (const p of all) {
        const got = await request(app).get(`/api/scenarios/${p.id}`).expect(200);
        expect(got.body.scenario).toEqual(p.scenario);
        expect(got.body.latestVersion).toBe(1);
      }
    } finally {
      await new Promise((r) => server.close(r));
    }
  });
});
