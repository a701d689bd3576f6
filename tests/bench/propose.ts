/**
 * Regimen-proposal figures for `npm run bench` (alone: `npm run bench:propose`): a search over
 * 10 amounts × 4 intervals on a saturable model (samples/orvanix-propose.json: Michaelis–Menten
 * elimination beside a small clearance, two compartments, 1 h infusions) — every regimen's
 * steady-state search, its figures and, for those that meet the targets, the time to the window;
 * target < 1 s at the median. Beside it, in the same run, the reference a user without the search
 * would run: each of the 40 regimens simulated by plain simulate() for 100 intervals (its last
 * interval read as the steady state), as a ratio. The search with loading doses is timed too.
 */
import { readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { proposeRegimens } from '../../models/regimen/propose.ts';
import { simulate } from '../../models/simulate.ts';
import { timeIt, type Timing } from './timing.ts';

const root = join(dirname(fileURLToPath(import.meta.url)), '..', '..');

export const proposeTargets = { searchMs: 1000 } as const;

const AMOUNTS = [100, 200, 300, 400, 500, 600, 700, 800, 900, 1000];
const INTERVALS = [6, 8, 12, 24];
const REFERENCE_INTERVALS = 100;

export interface ProposeBench {
  regimens: number;
  met: number;
  steadyStateSolves: number;
  intervalsSimulated: number;
  search: Timing;
  withLoading: Timing;
  reference: Timing;
  ratio: number;
  pass: boolean;
}

function scenario(loading: boolean): Record<string, unknown> {
  const s = JSON.parse(readFileSync(join(root, 'samples', 'orvanix-propose.json'), 'utf8')) as Record<string, unknown>;
  const p = s.propose as Record<string, unknown>;
  return { ...s, propose: { line: 0, amounts: AMOUNTS.map((a) => `${a} mg`), intervals: INTERVALS.map((t) => `${t} h`), durations: ['1 h'], loading, targets: p.targets } };
}

/** The plain way: every regimen simulated for many intervals, the last one's figures taken as the steady state. */
function bruteForce(base: Record<string, unknown>): number {
  const { propose: _p, ...rest } = base;
  let troughs = 0;
  for (const tau of INTERVALS) {
    for (const amount of AMOUNTS) {
      const out = simulate({ ...rest, doses: [{ into: 'central', amount, every: tau, count: REFERENCE_INTERVALS, duration: 1 }], output: { end: tau * REFERENCE_INTERVALS, step: tau } });
      if (!out.ok) throw new Error(JSON.stringify(out.problems));
      const intervals = out.value.metrics.compartments[0].intervals;
      troughs += intervals[intervals.length - 2].trough ?? 0;
    }
  }
  return troughs;
}

export function measurePropose(): ProposeBench {
  const plain = scenario(false);
  const loaded = scenario(true);
  const search = timeIt(() => proposeRegimens(plain), { budgetMs: 3000 });
  const withLoading = timeIt(() => proposeRegimens(loaded), { budgetMs: 3000 });
  const reference = timeIt(() => bruteForce(plain), { warmups: 1, warmupMs: 0, minReps: 3, maxReps: 5, budgetMs: 5000 });
  const r = search.value;
  if (!r.ok) throw new Error(JSON.stringify(r.problems));
  return {
    regimens: r.value.searched.regimens,
    met: r.value.proposals.filter((p) => p.allMet).length,
    steadyStateSolves: r.value.searched.steadyStateSolves,
    intervalsSimulated: r.value.searched.intervalsSimulated,
    search: search.timing,
    withLoading: withLoading.timing,
    reference: reference.timing,
    ratio: search.timing.median / reference.timing.median,
    pass: search.timing.median < proposeTargets.searchMs,
  };
}

export function proposeReport(b: ProposeBench): string {
  const ms = (v: number) => (v < 10 ? v.toFixed(2) : v < 100 ? v.toFixed(1) : v.toFixed(0));
  return [
    `regimens: ${b.regimens} (${AMOUNTS.length} amounts × ${INTERVALS.length} intervals), ${b.met} meeting every target; ${b.steadyStateSolves} steady-state searches, ${b.intervalsSimulated} intervals simulated from empty`,
    `search (median of ${b.search.reps}): ${ms(b.search.median)} ms (min ${ms(b.search.min)}, max ${ms(b.search.max)}); target < ${proposeTargets.searchMs} ms: ${b.pass ? 'PASS' : 'FAIL'}`,
    `with loading doses: ${ms(b.withLoading.median)} ms`,
    `reference, each regimen by plain simulate() over ${REFERENCE_INTERVALS} intervals: ${ms(b.reference.median)} ms; the search takes ${b.ratio.toFixed(3)}× of it`,
  ].join('\n');
}
