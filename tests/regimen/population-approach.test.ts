/**
 * Population proposals from empty (population-approach.ts): the first interval with and without
 * the typical subject's loading dose against the log-normal CDF, and the time to the window of a
 * population without variability against the typical basis's.
 */
import { describe, expect, it } from 'vitest';
import { normalCdf } from '../../models/population/normal.ts';
import { APPROACH_INTERVALS_SHOWN } from '../../models/regimen/population-approach.ts';
import { proposeByBasis } from '../../models/regimen/propose-basis.ts';
import { proposeRegimens, type Proposal, type ProposeResult } from '../../models/regimen/propose.ts';
import { sample } from './helpers.ts';

const limits = { subjects: 5000, runs: 50_000 };

function propose(input: unknown): ProposeResult {
  const r = proposeByBasis(input, limits);
  if (!r.ok) throw new Error(JSON.stringify(r.problems));
  return r.value;
}

const row = (p: Proposal) => p.population as NonNullable<Proposal['population']>;

// One compartment, IV bolus every τ, only clearance varying (log-normal: median CL, SD of ln CL
// s = √ln(1 + cv²)). The first trough after a first dose D is C1 = (D/V)·exp(−CL·τ/V), falling
// with CL, so the trough window X ≤ C1 ≤ Y is CL between (V/τ)·ln(D/(V·Y)) and (V/τ)·ln(D/(V·X)):
//   P = Φ(ln(CLhi/CL)/s) − Φ(ln(CLlo/CL)/s)        (the log-normal CDF, common practice)
// with D the loading dose or the maintenance dose.
const V = 30; // L
const CL = 3; // L/h
const cv = 0.3;
const s = Math.sqrt(Math.log(1 + cv * cv));
const tau = 12; // h
const X = 3.5; // mg/L
const Y = 6; // mg/L
const A = 300; // mg
const N = 400;

function firstIntervalShare(dose: number): number {
  const bound = (level: number) => (V / tau) * Math.log(dose / (V * level));
  const below = (c: number) => (c <= 0 ? 0 : normalCdf(Math.log(c / CL) / s));
  return below(bound(X)) - below(bound(Y));
}

const bolus = {
  title: 'One compartment, IV bolus, clearance varying',
  compartments: [{ id: 'central', volume: `${V} L` }],
  transfers: [{ from: 'central', cl: { typical: `${CL} L/h`, cv: `${cv * 100}%`, name: 'CL' } }],
  doses: [{ into: 'central', amount: `${A} mg`, every: `${tau} h`, count: 4 }],
  output: { end: '48 h', step: '12 h' },
  population: { subjects: N, seed: 11 },
  propose: {
    basis: 'population',
    strengths: ['100 mg'],
    amounts: [`${A} mg`],
    maxUnits: 6,
    intervals: [`${tau} h`],
    loading: true,
    targets: [{ trough: { atLeast: `${X} mg/L`, atMost: `${Y} mg/L` } }],
  },
};

describe('the loading dose for a population: its first interval against the log-normal CDF (IV bolus, clearance only varying)', () => {
  const r = propose(bolus);
  const p = r.proposals[0];
  const first = row(p).approach.firstInterval;
  const se = (q: number) => Math.sqrt((q * (1 - q)) / N);

  it('is the typical subject\'s loading dose: Gibaldi & Perrier\'s A/(1 − e^{−kτ}) (from memory), rounded onto the strengths', () => {
    const k = CL / V;
    expect(p.loading?.method).toBe('closed form');
    expect(Math.abs((p.loading?.computed as number) / (A / (1 - Math.exp(-k * tau))) - 1)).toBeLessThan(1e-9);
    // 429 mg rounds to the nearest 100 mg.
    expect(p.loading?.amount).toBe(400);
    expect(r.population?.loading).toMatch(/^chosen for the typical subject/);
  });

  it('with and without it, the share meeting the trough window in the first interval is within 3 Monte Carlo SE of the closed form', () => {
    const withLoading = firstIntervalShare(p.loading?.amount as number);
    const without = firstIntervalShare(A);
    // The two differ by far more than their errors: the loading dose's gain is measured, not noise.
    expect(withLoading - without).toBeGreaterThan(0.2);
    expect(Math.abs((first.withLoading?.probability as number) - withLoading)).toBeLessThanOrEqual(3 * se(withLoading));
    expect(Math.abs(first.without.probability - without)).toBeLessThanOrEqual(3 * se(without));
    expect(first.without.standardError).toBeCloseTo(se(first.without.probability), 12);
    // The first of the listed intervals is the same first interval.
    expect(row(p).approach.byInterval[0]).toEqual(first.without);
    expect(row(p).approach.byInterval).toHaveLength(APPROACH_INTERVALS_SHOWN);
  });

  it('counts every subject: those reaching the window and those who never do add up to N', () => {
    const a = row(p).approach;
    const never = a.neverReached;
    expect(a.reached + never.steadyStateMisses + never.noSteadyState + never.onlyAtSteadyState + never.failed).toBe(N);
    // Those whose steady state misses the window are exactly the steady-state non-attainers.
    expect(never.steadyStateMisses).toBe(N - row(p).joint.attained);
  });
});

describe('time to the window of a population without variability equals the typical basis\'s', () => {
  // samples/orvanix-propose.json (saturable) has no cv anywhere: every virtual subject is the typical one.
  const base = sample('orvanix-propose.json');
  const narrowed = { ...(base.propose as Record<string, unknown>), amounts: ['500 mg', '750 mg', '1000 mg'], intervals: ['12 h', '24 h'], durations: ['1 h'] };
  const typical = proposeRegimens({ ...base, propose: narrowed });
  if (!typical.ok) throw new Error(JSON.stringify(typical.problems));
  const population = propose({ ...base, population: { subjects: 3, seed: 5 }, propose: { ...narrowed, basis: 'population' } });
  const key = (p: Proposal) => `${p.amount}/${p.interval}/${p.duration}`;
  const byKey = new Map(typical.value.proposals.map((p) => [key(p), p]));

  it('in every regimen: the same time (median, 5th and 95th percentiles) where the typical subject meets its targets, never reached where not', () => {
    expect(population.proposals).toHaveLength(6);
    let compared = 0;
    for (const p of population.proposals) {
      const t = byKey.get(key(p)) as Proposal;
      const a = row(p).approach;
      if (t.allMet) {
        compared++;
        expect(t.timeToWindow).not.toBeNull();
        expect(a.timeToWindow).toEqual({ p5: t.timeToWindow, p50: t.timeToWindow, p95: t.timeToWindow });
        expect(p.timeToWindow).toBe(t.timeToWindow);
        expect(p.intervalsToWindow).toBe(t.intervalsToWindow);
        expect(a.reached).toBe(3);
        // The same loading dose, and its first interval judged alike.
        expect(p.loading?.amount).toBe(t.loading?.amount);
        expect(a.firstInterval.withLoading?.probability).toBe(t.loading?.firstIntervalMet ? 1 : 0);
      } else {
        expect(a.timeToWindow).toEqual({ p5: null, p50: null, p95: null });
        expect(a.reached).toBe(0);
      }
    }
    expect(compared).toBeGreaterThan(0);
  });
});
