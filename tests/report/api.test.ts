// POST /api/report through supertest against the real app and a real worker pool: a PDF
// with its file name on success; the same JSON problems as /api/simulate otherwise.
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { scenarioFingerprint } from '../../models/scenario/fingerprint.ts';
import { createApp, defaultServerLimits } from '../../server/app.ts';
import { loadSamples } from '../../server/samples.ts';
import { SimulationPool } from '../../server/worker-pool.ts';
import { failing, pdfPages, readSample, removeTempFiles } from './helpers.ts';

const brennock = readSample('brennock-oral-bid');
let pool: SimulationPool;
let app: ReturnType<typeof createApp>;

beforeAll(() => {
  pool = new SimulationPool({ size: 2, timeBudgetMs: 30_000, maxQueue: 8 });
  app = createApp({ pool, samples: loadSamples(), clientDir: null, limits: { ...defaultServerLimits, bodyLimit: '100kb', maxOutputPoints: 50_000, timeBudgetMs: 30_000 } });
});
afterAll(async () => {
  await pool.close();
  removeTempFiles();
});

/** Collects a binary body (superagent leaves unknown types unparsed). */
function binary(res: unknown, done: (err: Error | null, body: unknown) => void): void {
  const stream = res as NodeJS.ReadableStream;
  const chunks: Buffer[] = [];
  stream.on('data', (c: Buffer) => chunks.push(c));
  stream.on('end', () => done(null, Buffer.concat(chunks)));
}

describe('POST /api/report', () => {
  it('answers a PDF named after the title and the fingerprint', async () => {
    const res = await request(app).post('/api/report').send(brennock).buffer(true).parse(binary).expect(200);
    expect(res.headers['content-type']).toMatch(/^application\/pdf/);
    expect(res.headers['content-disposition']).toBe(`attachment; filename="tidemark-brennock-400-mg-by-mouth-twice-daily-${scenarioFingerprint(brennock)}.pdf"`);
    const body = res.body as Buffer;
    expect(body.subarray(0, 5).toString('latin1')).toBe('%PDF-');
    const pages = pdfPages(new Uint8Array(body));
    expect(pages.length).toBeGreaterThanOrEqual(2);
    expect(pages[0]).toContain(scenarioFingerprint(brennock));
  });

  it('accepts { scenario, reference } and draws the reference', async () => {
    const reference = { ...structuredClone(brennock), title: 'Brennock 600 mg by mouth twice daily', doses: [{ ...(brennock.doses as object[])[0], amount: '600 mg' }] };
    const res = await request(app).post('/api/report').send({ scenario: brennock, reference }).buffer(true).parse(binary).expect(200);
    // The file is named after the scenario, not the reference.
    expect(res.headers['content-disposition']).toContain(scenarioFingerprint(brennock));
    const text = pdfPages(new Uint8Array(res.body as Buffer)).join('\n');
    expect(text).toContain('reference (dashed)');
    expect(text).toContain(scenarioFingerprint(reference));
  });

  it('answers 400 JSON exactly as /api/simulate does for an invalid scenario', async () => {
    const bad = { ...brennock, doses: [{ into: 'tisue', amount: '100 mg' }] };
    const report = await request(app).post('/api/report').send(bad).expect(400);
    const simulate = await request(app).post('/api/simulate').send(bad).expect(400);
    expect(report.headers['content-type']).toMatch(/^application\/json/);
    expect(report.body).toEqual(simulate.body);
    expect(report.body.problems[0]).toEqual({ path: 'doses[0].into', message: "no compartment named 'tisue' (compartments are 'gut', 'central')" });
  });

  it('answers 400 JSON for a body that is not a scenario at all', async () => {
    const res = await request(app).post('/api/report').send({ hello: 'world' }).expect(400);
    expect(res.headers['content-type']).toMatch(/^application\/json/);
    expect(res.body.problems.length).toBeGreaterThan(0);
  });

  it('answers 422 JSON on numerical failure', async () => {
    const res = await request(app).post('/api/report').send(failing).expect(422);
    expect(res.headers['content-type']).toMatch(/^application\/json/);
    expect(res.body.problems[0].path).toBe('solver');
  });

  it('applies the server limit on reported times, naming output.step', async () => {
    const many = { ...brennock, output: { end: '7 day', step: '1 s' } };
    const res = await request(app).post('/api/report').send(many).expect(400);
    expect(res.body.problems[0].path).toBe('output.step');
  });
});
