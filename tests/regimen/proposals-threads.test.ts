/**
 * Population proposals across threads (server/proposals-threads.ts): the same seed gives the
 * same numbers, bit for bit, on one thread and on two worker threads sharing the chunks (the
 * calling thread only waiting, so every number comes from the workers), and the same as the core
 * in one thread. The workers run from the TypeScript source here.
 */
import { describe, expect, it } from 'vitest';
import { proposeByBasis } from '../../models/regimen/propose-basis.ts';
import { proposeOnThreads } from '../../server/proposals-threads.ts';
import { runProposeCli } from '../../server/propose-cli.ts';

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

  it('a bad --threads is a usage error', () => {
    const o = runProposeCli(['x.json', '--threads', '0'], { folder: '.' });
    expect(o.code).toBe(2);
    expect(o.stderr).toMatch(/^--threads must be a whole number from 1 to 256, not '0'/);
  });
});
