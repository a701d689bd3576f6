/**
 * Population proposals from empty (population-approach.ts): the first interval with and without
 * the typical subject's loading dose against the log-normal CDF, the time to the window of a
 * population without variability against the typical basis's and the closed form of accumulation,
 * a loading dose the strengths cannot give, and the percentiles where some subjects never reach.
 */
import { describe, expect, it } from 'vitest';
import { normalCdf } from '../../models/population/normal.ts';
import { APPROACH_INTERVALS_SHOWN } from '../../models/regimen/population-approach.ts';
import { proposeByBasis } from '../../models/regimen/propose-basis.ts';
import { proposeRegimens, type Proposal, type ProposeResult } from '../../models/regimen/propose.ts';
import { simulatedLoading } from '../../models/regimen/proposal-words.ts';
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
        expect(a.firstInterval.withLoading?.probability).toBe(simulatedLoading(t)?.firstIntervalMet ? 1 : 0);
      } else {
        expect(a.timeToWindow).toEqual({ p5: null, p50: null, p95: null });
        expect(a.reached).toBe(0);
      }
    }
    expect(compared).toBeGreaterThan(0);
  });
});

// One compartment, IV bolus D every τ from empty: the trough of dose n is
//   C_n = (D/V)·e^{−kτ}·(1 − e^{−nkτ})/(1 − e^{−kτ}),  k = CL/V   (superposition of boluses, common practice),
// rising to the steady-state trough C_ss = (D/V)·e^{−kτ}/(1 − e^{−kτ}).
const troughAfter = (d: number, cl: number, v: number, t: number, n: number) => {
  const e = Math.exp((-cl / v) * t);
  return ((d / v) * e * (1 - Math.pow(e, n))) / (1 - e);
};

describe('a trough target the steady state only just meets is walked until met, not stopped near the steady state', () => {
  // CL 0.3 L/h, V 30 L, 300 mg every 12 h: C_ss = 78.43 mg/L; the target 78.041 mg/L is met from dose 45 (540 h).
  const slow = {
    title: 'One compartment, IV bolus, slow clearance',
    compartments: [{ id: 'central', volume: '30 L' }],
    transfers: [{ from: 'central', cl: '0.3 L/h' }],
    doses: [{ into: 'central', amount: '300 mg', every: '12 h', count: 4 }],
    output: { end: '48 h', step: '12 h' },
    propose: { strengths: ['100 mg'], amounts: ['300 mg'], maxUnits: 6, intervals: ['12 h'], loading: true, targets: [{ trough: { atLeast: '78.041 mg/L' } }] },
  };
  let n = 1;
  while (troughAfter(300, 0.3, 30, 12, n) < 78.041) n++;

  it('the closed form puts the first met trough at dose 45; the typical basis and three identical subjects give 540 h', () => {
    expect(n).toBe(45);
    const typical = proposeRegimens(slow);
    if (!typical.ok) throw new Error(JSON.stringify(typical.problems));
    expect(typical.value.proposals[0].timeToWindow).toBe(n * 12);
    const population = propose({ ...slow, population: { subjects: 3, seed: 1 }, propose: { ...slow.propose, basis: 'population' } });
    const a = row(population.proposals[0]).approach;
    expect(a.reached).toBe(3);
    expect(a.timeToWindow).toEqual({ p5: 540, p50: 540, p95: 540 });
    expect(population.proposals[0].timeToWindow).toBe(540);
  });

  it('a loading dose above every sum of the strengths is given as the largest, and the row says so with the amount computed', () => {
    // Gibaldi & Perrier (from memory): D/(1 − e^{−kτ}) = 2,653 mg; 6 × 100 mg is the most the strengths give.
    const computed = 300 / (1 - Math.exp(-0.01 * 12));
    const population = propose({ ...slow, population: { subjects: 3, seed: 1 }, propose: { ...slow.propose, basis: 'population' } });
    const loading = population.proposals[0].loading;
    expect(loading?.amount).toBe(600);
    expect(Math.abs((loading?.computed as number) / computed - 1)).toBeLessThan(1e-9);
    expect(loading?.note).toBe('capped at 600 mg: the strengths give no more; computed 2653 mg');
    // The population row carries the amount only: the typical subject's time to the window would read as the population's.
    expect(loading).not.toHaveProperty('timeToWindow');
    expect(loading).not.toHaveProperty('firstIntervalMet');
    // The typical basis notes the same; a loading dose within the strengths' steps has no note (the bolus scenario above: 429 → 400 mg).
    const typical = proposeRegimens(slow);
    if (!typical.ok) throw new Error(JSON.stringify(typical.problems));
    expect(typical.value.proposals[0].loading?.note).toBe(loading?.note);
    expect(propose(bolus).proposals[0].loading?.note).toBeNull();
  });
});

describe('percentiles of the time to the window when part of the population never reaches it (IV bolus, clearance only varying)', () => {
  // The steady-state trough falls with CL: subjects with CL below CLcrit (C_ss(CLcrit) = level) meet
  // a trough ≥ level, a share Φ(ln(CLcrit/CL)/s) of the log-normal population (common practice).
  const level = 3.27; // mg/L: about 70% of subjects meet it at steady state
  let lo = 0.5;
  let hi = 20;
  while (hi - lo > 1e-12) {
    const mid = 0.5 * (lo + hi);
    if (troughAfter(A, mid, V, tau, Infinity) >= level) lo = mid;
    else hi = mid;
  }
  const expected = normalCdf(Math.log(lo / CL) / s);
  const r = propose({ ...bolus, propose: { ...bolus.propose, loading: false, targets: [{ trough: { atLeast: `${level} mg/L` } }] } });
  const p = r.proposals[0];
  const a = row(p).approach;

  it('the steady-state attainers are within 3 Monte Carlo SE of the log-normal share, and every one of them reaches the window', () => {
    const attained = row(p).joint.attained;
    expect(Math.abs(attained / N - expected)).toBeLessThanOrEqual(3 * Math.sqrt((expected * (1 - expected)) / N));
    // A trough rises from empty to its steady state: a subject whose steady state meets the target meets it in time.
    expect(a.reached).toBe(attained);
    expect(a.neverReached.steadyStateMisses).toBe(N - attained);
    expect(a.neverReached.onlyAtSteadyState + a.neverReached.noSteadyState + a.neverReached.failed).toBe(0);
  });

  it('a percentile is "not reached" exactly when definition 7 needs an order statistic beyond the last subject reaching the window', () => {
    // Hyndman & Fan's definition 7: order statistics floor(h) and ceil(h), h = (N − 1)·q/100 (0-based), the never-reached sorted last.
    const finite = (q: number) => Math.ceil(((N - 1) * q) / 100) < a.reached;
    expect(finite(5) && finite(50) && !finite(95)).toBe(true);
    for (const [q, v] of [[5, a.timeToWindow.p5], [50, a.timeToWindow.p50], [95, a.timeToWindow.p95]] as const) {
      if (finite(q)) expect(v).toBeGreaterThan(0);
      else expect(v).toBeNull();
    }
    // More than half reach it, so the row's median is the population median.
    expect(p.timeToWindow).toBe(a.timeToWindow.p50);
  });
});
