/**
 * Fuzzes the HTTP API with mutated samples against a real worker pool: every answer must
 * pass answerDefect, none may take longer than the pool's budget (plus the time to hand
 * the answer back), and after any heavy case an ordinary simulation must answer promptly.
 * Used by tests/fuzz/fuzz.test.ts (a small slice) and `npm run fuzz` (10,000 cases).
 */
import fc from 'fast-check';
import { readFileSync } from 'node:fs';
import request from 'supertest';
import { createApp, defaultServerLimits } from '../../server/app.ts';
import { loadSamples } from '../../server/samples.ts';
import { SimulationPool } from '../../server/worker-pool.ts';
import { answerDefect, mutatedScenario } from './mutations.ts';

export interface FuzzOptions {
  numRuns: number;
  seed: number;
  /** The pool's time budget per job. */
  budgetMs: number;
  /** Allowed on top of the budget: replacing a worker and moving the answer. */
  slackMs: number;
  /** An ordinary simulation after a heavy case must answer within this. */
  promptMs: number;
  onProgress?: (done: number) => void;
}

export interface FuzzSummary {
  runs: number;
  byStatus: Record<number, number>;
  slowest: { ms: number; scenario: string };
  ordinaryChecks: number;
  ordinarySlowestMs: number;
}

const ordinary = JSON.parse(readFileSync('samples/brennock-oral-bid.json', 'utf8')) as object;
const routes = ['/api/simulate', '/api/validate', '/api/report'] as const;

export async function fuzzServer(options: FuzzOptions): Promise<FuzzSummary> {
  const pool = new SimulationPool({ size: 2, timeBudgetMs: options.budgetMs, maxQueue: 8 });
  const app = createApp({ pool, samples: loadSamples(), clientDir: null, limits: { ...defaultServerLimits, timeBudgetMs: options.budgetMs } });
  const summary: FuzzSummary = { runs: 0, byStatus: {}, slowest: { ms: 0, scenario: '' }, ordinaryChecks: 0, ordinarySlowestMs: 0 };
  try {
    // Workers load the engine when they start; time only what comes after both are ready.
    await Promise.all([0, 1].map(() => request(app).post('/api/simulate').send(ordinary)));
    await fc.assert(
      fc.asyncProperty(mutatedScenario, fc.nat({ max: 9 }), async ({ scenario }, routePick) => {
        // Mostly simulations; a report or a validation one time in ten each.
        const route = routePick === 0 ? routes[2] : routePick === 1 ? routes[1] : routes[0];
        const started = performance.now();
        const res = await request(app).post(route).set('Content-Type', 'application/json').send(JSON.stringify(scenario));
        const ms = performance.now() - started;
        summary.runs++;
        summary.byStatus[res.status] = (summary.byStatus[res.status] ?? 0) + 1;
        options.onProgress?.(summary.runs);
        if (ms > summary.slowest.ms) summary.slowest = { ms, scenario: JSON.stringify(scenario).slice(0, 2000) };
        if (ms > options.budgetMs + options.slackMs) throw new Error(`${route} took ${ms.toFixed(0)} ms, over the budget of ${options.budgetMs} ms`);
        const defect =
          res.status !== 200 || route === '/api/simulate'
            ? answerDefect(res.status, res.body)
            : route === '/api/report'
              ? res.headers['content-type']?.startsWith('application/pdf') ? null : 'a report without a PDF'
              : res.body?.valid === true ? null : 'a 200 validation without valid: true';
        if (defect) throw new Error(`${route}: ${defect}`);
        if (ms > 1000 || res.status === 422) {
          const t0 = performance.now();
          const next = await request(app).post('/api/simulate').send(ordinary);
          const nextMs = performance.now() - t0;
          summary.ordinaryChecks++;
          summary.ordinarySlowestMs = Math.max(summary.ordinarySlowestMs, nextMs);
          if (next.status !== 200) throw new Error(`the ordinary simulation after a heavy case answered ${next.status}`);
          if (nextMs > options.promptMs) throw new Error(`the ordinary simulation after a heavy case took ${nextMs.toFixed(0)} ms`);
        }
      }),
      { numRuns: options.numRuns, seed: options.seed, endOnFailure: true },
    );
  } finally {
    await pool.close();
  }
  return summary;
}
