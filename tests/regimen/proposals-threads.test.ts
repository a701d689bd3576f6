/**
 * Population proposals across threads (server/proposals-threads.ts): the same seed gives the
 * same numbers, bit for bit, on one thread and on two worker threads sharing the chunks (the
 * calling thread only waiting, so every number comes from the workers), and the same as the core
 * in one thread. The workers run from the TypeScript source here. A silent worker's chunks are
 * taken back after the silence the caller gives, and a server's proposal job runs in one thread.
 */
import { describe, expect, it, vi } from 'vitest';
import { proposeByBasis } from '../../models/regimen/propose-basis.ts';
import { proposalThreadsInPool, runLevelsJob } from '../../server/levels-jobs.ts';
import { proposeOnThreads, stallForBudget, THREADS_FROM_RUNS } from '../../server/proposals-threads.ts';
import { runProposeCli } from '../../server/propose-cli.ts';
import { startWorker } from '../../server/worker-pool.ts';

// Every worker start is counted, and still happens.
vi.mock('../../server/worker-pool.ts', async (importOriginal) => {
  const real = await importOriginal<typeof import('../../server/worker-pool.ts')>();
  return { ...real, startWorker: vi.fn(real.startWorker) };
});

const limits = { subjects: 5000, runs: 50_000 };

// A one-compartment bolus with clearance and volume varying, three candidates and a loading dose:
// small, but every part of a chunk (steady states, runs from empty, the loading dose) is there.
const scenario = {
  title: 'One compartment, IV bolus, clearance and volume varying',
  compartments: [{ id: 'central', volume: { typical: '30 L', cv: '20%', name: 'V' } }],
  transfers: [{ from: 'central', cl: { typical: '3 L/h', cv: '30%', name: 'CL' } }],
  doses: [{ into: 'central', amount: '300 mg', every: '12 h', count: 4 }],
  output: { end: '48 h', step: '12 h' },
  population: { subjects: 37, seed: 4 },
  propose: {
    basis: 'population',
    strengths: ['100 mg'],
    amounts: ['200 mg', '300 mg', '400 mg'],
    maxUnits: 6,
    intervals: ['12 h'],
    loading: true,
    targets: [{ trough: { atLeast: '3 mg/L', atMost: '7 mg/L' } }, { peak: { atMost: '20 mg/L' } }],
  },
};

describe('threads give the numbers of one thread', () => {
  it('two worker threads taking the chunks (this thread waiting) = one thread = the core, bit for bit', () => {
    const one = proposeOnThreads(scenario, limits, { threads: 1 });
    const two = proposeOnThreads(scenario, limits, { threads: 3, minRuns: 0, callerComputes: false });
    const core = proposeByBasis(scenario, limits);
    if (!one.ok || !two.ok || !core.ok) throw new Error('expected proposals');
    // The subjects were split into several chunks, so the join in subject order is exercised.
    expect(two.value.population?.subjects).toBe(37);
    expect(two.value).toEqual(one.value);
    expect(one.value).toEqual(core.value);
    // Figures that differ between candidates, so an equality is not of empty rows.
    expect(new Set(one.value.proposals.map((p) => p.population?.approach.firstInterval.without.attained)).size).toBeGreaterThan(1);
    expect(one.value.searched.intervalsSimulated).toBeGreaterThan(0);
  }, 60_000);

  it('a worker that takes a chunk and is never heard from again: its chunks are done here after the silence, same numbers', () => {
    const silent = { kind: 'built' as const, url: new URL('./silent-proposals-worker.mjs', import.meta.url) };
    const one = proposeOnThreads(scenario, limits, { threads: 1 });
    const rescued = proposeOnThreads(scenario, limits, { threads: 2, minRuns: 0, callerComputes: false, worker: silent, stallMs: 300 });
    if (!one.ok || !rescued.ok) throw new Error('expected proposals');
    expect(rescued.value).toEqual(one.value);
  });

  it('the silence waited for is the stallMs given: on a clock moving 1 s a reading, 2.5 s and 5.5 s of silence end at the 4th and 7th reading', () => {
    const silent = { kind: 'built' as const, url: new URL('./silent-proposals-worker.mjs', import.meta.url) };
    const one = proposeOnThreads(scenario, limits, { threads: 1 });
    if (!one.ok) throw new Error('expected proposals');
    const readingsUntilRescue = (stallMs: number) => {
      let readings = 0;
      const now = () => ++readings * 1000;
      const rescued = proposeOnThreads(scenario, limits, { threads: 2, minRuns: 0, callerComputes: false, worker: silent, stallMs, now });
      if (!rescued.ok) throw new Error('expected proposals');
      expect(rescued.value).toEqual(one.value);
      return readings;
    };
    // Heard at reading 1; reading k finds (k − 1) s of silence, rescued once that exceeds stallMs.
    expect(readingsUntilRescue(2500)).toBe(4);
    expect(readingsUntilRescue(5500)).toBe(7);
  });

  it('a server proposal job runs in this thread alone: no worker started, though the runs are past the threads threshold', () => {
    const large = { ...scenario, population: { subjects: 700, seed: 4 } };
    // 700 subjects × 3 regimens: enough that proposeOnThreads would start workers on its own.
    expect(700 * scenario.propose.amounts.length).toBeGreaterThanOrEqual(THREADS_FROM_RUNS);
    vi.mocked(startWorker).mockClear();
    const reply = runLevelsJob({ kind: 'propose', scenario: large, maxOutputPoints: 10_000 }, { poolSize: 2, timeBudgetMs: 30_000 });
    expect(reply.status).toBe(200);
    expect(JSON.parse(reply.body as string).population.subjects).toBe(700);
    expect(vi.mocked(startWorker)).not.toHaveBeenCalled();
  }, 60_000);

  it('threads inside a pool: one among several workers; with a single worker, a third of the budget left as the silence and the pool heap limit', () => {
    expect(proposalThreadsInPool({})).toEqual({ threads: 1 });
    expect(proposalThreadsInPool({ poolSize: 2, timeBudgetMs: 30_000, workerHeapMb: 1024 })).toEqual({ threads: 1 });
    // 30 s budget, 3 s spent: 27 s left, a third of it 9 s.
    expect(proposalThreadsInPool({ poolSize: 1, timeBudgetMs: 30_000, workerHeapMb: 512, began: 1_000 }, 4_000)).toEqual({ workersAtOnce: false, stallMs: 9_000, heapMb: 512 });
    expect(stallForBudget(30_000)).toBe(10_000);
  });

  it('a bad --threads is a usage error', () => {
    const o = runProposeCli(['x.json', '--threads', '0'], { folder: '.' });
    expect(o.code).toBe(2);
    expect(o.stderr).toMatch(/^--threads must be a whole number from 1 to 256, not '0'/);
  });
});
