/**
 * Regimen proposals: the check (every proposal marked as meeting its targets, simulated
 * independently by simulate() out to many intervals, lies inside the window), the steady state of
 * a linear infusion against the closed form, a saturable steady state against its long-run cycle,
 * the loading dose, the ranking rule and bad input with paths.
 */
import { describe, expect, it } from 'vitest';
import { proposeRegimens } from '../../models/regimen/propose.ts';
import { simulatedLoading } from '../../models/regimen/proposal-words.ts';
import { compareProposals, logDistance, type Rankable } from '../../models/regimen/rank.ts';
import { amountsFromStrengths, roundToAvailable } from '../../models/regimen/strengths.ts';
import { propose, sample, simulateRegimen } from './helpers.ts';

const saturable = sample('orvanix-propose.json');
const saturableResult = propose(saturable);

describe('saturable proposals (samples/orvanix-propose.json)', () => {
  const met = saturableResult.proposals.filter((p) => p.allMet);

  it('proposes some regimens that meet every target, ranked first', () => {
    expect(met.length).toBeGreaterThan(0);
    expect(saturableResult.proposals.slice(0, met.length).every((p) => p.allMet)).toBe(true);
    expect(saturableResult.searched.regimens).toBe(8 * 3 * 2);
  });

  it('puts every proposal that meets its targets inside the window when simulated by simulate() for 120 intervals (the issue\'s check)', () => {
    for (const p of met) {
      const intervals = simulateRegimen(saturable, { amount: p.amount, interval: p.interval, duration: p.duration, into: 'central' }, 120, 'central');
      const late = intervals[intervals.length - 2];
      // Targets of the sample: trough 4–10 mg/L, peak ≤ 25 mg/L.
      expect(late.trough as number).toBeGreaterThanOrEqual(4);
      expect(late.trough as number).toBeLessThanOrEqual(10);
      expect(late.cmax).toBeLessThanOrEqual(25);
      // And the late cycle is the steady state found: the search's tolerance is 100·rtol = 1e-6 (steady-state.ts);
      // 1e-5 leaves room for the integration error of 120 intervals.
      expect(Math.abs((late.trough as number) / (p.steadyState?.trough as number) - 1)).toBeLessThan(1e-5);
      expect(Math.abs(late.cmax / (p.steadyState?.peak as number) - 1)).toBeLessThan(1e-5);
    }
  });

  it('reports no time to the window for regimens that miss, and the first interval in the window for those that meet', () => {
    for (const p of saturableResult.proposals) {
      if (!p.allMet) expect(p.timeToWindow).toBeNull();
      else {
        const intervals = simulateRegimen(saturable, { amount: p.amount, interval: p.interval, duration: p.duration, into: 'central' }, (p.intervalsToWindow as number) + 1, 'central');
        const k = (p.intervalsToWindow as number) - 1;
        expect(intervals[k].trough as number).toBeGreaterThanOrEqual(4);
        if (k > 0) expect(intervals[k - 1].trough as number).toBeLessThan(4);
      }
    }
  });

  it('is not proportional: doubling the dose more than doubles the AUC (Michaelis–Menten elimination)', () => {
    const at = (amount: number) => saturableResult.proposals.find((p) => p.amount === amount && p.interval === 24 && p.duration === 1);
    const single = at(500)?.steadyState?.auc24 as number;
    const double = at(1000)?.steadyState?.auc24 as number;
    expect(double).toBeGreaterThan(2.2 * single);
  });

  it('gives a loading dose that brings the first trough into the window, verified by simulate()', () => {
    const p = met[0];
    const loading = simulatedLoading(p);
    expect(loading?.method).toBe('bisection');
    expect(loading?.firstTroughMet).toBe(true);
    const intervals = simulateRegimen(saturable, { amount: p.amount, interval: p.interval, duration: p.duration, into: 'central', loading: loading?.amount }, 3, 'central');
    expect(intervals[0].trough as number).toBeGreaterThanOrEqual(4);
    expect(intervals[0].trough as number).toBeLessThanOrEqual(10);
    expect(Math.abs((intervals[0].trough as number) - (loading?.firstTrough as number))).toBeLessThan(1e-6);
    // The loading dose reaches the window sooner than the maintenance alone.
    expect(loading?.timeToWindow as number).toBeLessThan(p.timeToWindow as number);
    // A sum of the strengths (250 and 500 mg) of at most maxUnits (4) units.
    expect(loading?.amount as number % 250).toBe(0);
    expect(loading?.amount as number).toBeLessThanOrEqual(2000);
  });

  it('carries the caution', () => {
    expect(saturableResult.caution).toBe("Proposals are model outputs for a clinician's review, not recommendations; follow local protocols, the product labelling and licensed practice.");
  });
});

// A one-compartment intermittent IV infusion: k = CL/V, infusion rate R = dose/T.
const V = 30;
const CL = 4.5;
const k = CL / V;
const linear = {
  title: 'linear infusion',
  compartments: [{ id: 'central', volume: `${V} L` }],
  transfers: [{ from: 'central', cl: `${CL} L/h` }],
  doses: [{ into: 'central', amount: '500 mg', every: '12 h', duration: '1 h', count: 10 }],
  output: { end: '120 h' },
  propose: {
    amounts: ['250 mg', '500 mg', '1000 mg', '1500 mg'],
    intervals: ['8 h', '12 h', '24 h'],
    durations: ['30 min', '2 h'],
    loading: true,
    targets: [{ trough: { atLeast: '5 mg/L', atMost: '15 mg/L' } }, { peak: { atMost: '60 mg/L' } }, { window: { from: '5 mg/L', to: '40 mg/L' }, forAtLeast: '60%' }],
  },
};

describe('linear proposals (one-compartment IV infusion)', () => {
  const result = propose(linear);

  it('scales the unit dose: one steady-state solve per (interval, duration)', () => {
    expect(result.searched.method).toBe('unit dose scaled (linear)');
    expect(result.searched.steadyStateSolves).toBe(3 * 2);
  });

  it('matches the closed-form steady-state peak and trough to 1e-9 (Gibaldi & Perrier, from memory)', () => {
    for (const p of result.proposals) {
      const T = p.duration;
      const tau = p.interval;
      const R = p.amount / T;
      // Css,max = R(1 − e^{−kT}) / (CL(1 − e^{−kτ})); Css,min = Css,max·e^{−k(τ − T)}.
      const cmax = (R * (1 - Math.exp(-k * T))) / (CL * (1 - Math.exp(-k * tau)));
      const cmin = cmax * Math.exp(-k * (tau - T));
      expect(Math.abs((p.steadyState?.peak as number) / cmax - 1)).toBeLessThan(1e-9);
      expect(Math.abs((p.steadyState?.trough as number) / cmin - 1)).toBeLessThan(1e-9);
      // AUC over an interval at steady state = dose/CL (the dose-proportionality of linear kinetics).
      expect(Math.abs((p.steadyState?.auc24 as number) / ((p.amount / CL) * (24 / tau)) - 1)).toBeLessThan(1e-9);
    }
  });

  it('reads the share in the window of a scaled amount as a run at that amount would', () => {
    const p = result.proposals.find((x) => x.amount === 1000 && x.interval === 12 && x.duration === 2);
    const alone = propose({ ...linear, propose: { ...linear.propose, amounts: ['1000 mg'], intervals: ['12 h'], durations: ['2 h'] } }).proposals[0];
    // The same unit-dose cycle, its window's levels divided by the amount: equal to the search's tolerance of crossing roots.
    expect(Math.abs((p?.steadyState?.shareInWindow as number) - (alone.steadyState?.shareInWindow as number))).toBeLessThan(1e-9);
  });

  it('puts every proposal that meets its targets inside the window when simulated by simulate() for 60 intervals', () => {
    const met = result.proposals.filter((p) => p.allMet);
    expect(met.length).toBeGreaterThan(0);
    for (const p of met) {
      const intervals = simulateRegimen(linear, { amount: p.amount, interval: p.interval, duration: p.duration, into: 'central' }, 60, 'central');
      const late = intervals[intervals.length - 2];
      expect(late.trough as number).toBeGreaterThanOrEqual(5);
      expect(late.trough as number).toBeLessThanOrEqual(15);
      expect(late.cmax).toBeLessThanOrEqual(60);
    }
  });

  it('gives the closed-form loading dose, maintenance × accumulation ratio (Gibaldi & Perrier, from memory)', () => {
    for (const p of result.proposals.filter((x) => x.allMet)) {
      // One compartment: each earlier dose adds its own curve decayed by e^{−kτ} per interval, so the
      // steady-state trough is the first trough × 1/(1 − e^{−kτ}), infusion or bolus (superposition).
      expect(Math.abs((p.loading?.computed as number) / (p.amount / (1 - Math.exp(-k * p.interval))) - 1)).toBeLessThan(1e-9);
      expect(p.loading?.method).toBe('closed form');
    }
  });
});

describe('amounts from the strengths', () => {
  it('makes 250, 500, … 10000 mg of 250 and 500 mg strengths with up to 20 units', () => {
    const a = amountsFromStrengths([250, 500], 20) as number[];
    expect(a.length).toBe(40);
    expect(a[0]).toBe(250);
    expect(a[39]).toBe(10000);
  });
  it('rounds onto them by the rule', () => {
    const a = [250, 500, 750, 1000];
    expect(roundToAvailable(620, a, 'nearest')).toBe(500);
    expect(roundToAvailable(625, a, 'nearest')).toBe(750);
    expect(roundToAvailable(510, a, 'up')).toBe(750);
    expect(roundToAvailable(740, a, 'down')).toBe(500);
    expect(roundToAvailable(5000, a, 'nearest')).toBe(1000);
  });
});

describe('ranking rule (hand example)', () => {
  const day = 24;
  const p = (amount: number, interval: number, allMet: boolean, distance: number, met = [allMet]): Rankable => ({ amount, interval, duration: 0, allMet, targetsMet: met, distance });
  it('orders met first, then log distance, then doses per day, then daily amount', () => {
    const list = [
      p(500, 8, true, 0.2),
      p(1000, 24, false, 0),
      p(1000, 12, true, 0.2),
      p(750, 12, true, 0.2),
      p(500, 12, true, 0.1),
    ];
    const sorted = [...list].sort((a, b) => compareProposals(a, b, day));
    expect(sorted.map((x) => [x.amount, x.interval])).toEqual([
      [500, 12], // met, closest to the middle
      [750, 12], // met, 0.2; twice a day; 1500 mg a day
      [1000, 12], // met, 0.2; twice a day; 2000 mg a day
      [500, 8], // met, 0.2; three times a day
      [1000, 24], // misses
    ]);
  });
  it('measures the distance in log terms from the geometric middle', () => {
    // Window 4–16: middle 8; a trough of 16 and one of 4 are equally far.
    expect(logDistance(16, { target: 0, low: 4, high: 16 })).toBeCloseTo(Math.log(2), 15);
    expect(logDistance(4, { target: 0, low: 4, high: 16 })).toBeCloseTo(Math.log(2), 15);
  });
});

describe('bad input, with paths', () => {
  const problems = (change: Record<string, unknown>) => {
    const r = proposeRegimens({ ...linear, propose: { ...linear.propose, ...change } });
    return r.ok ? [] : r.problems.map((x) => `${x.path}: ${x.message}`);
  };
  it('names a line that does not exist', () => expect(problems({ line: 4 })).toEqual([expect.stringMatching(/^propose\.line: there is no doses\[4\]/)]));
  it('needs targets', () => expect(problems({ targets: [] })).toEqual([expect.stringMatching(/^propose\.targets: needs at least one target/)]));
  it('names a bad interval', () => expect(problems({ intervals: ['8 h', '-2 h'] })).toEqual([expect.stringMatching(/^propose\.intervals\[1\]: must be greater than zero/)]));
  it('names an interval in the wrong unit', () => expect(problems({ intervals: ['8 h', '3 mg'] })[0]).toMatch(/^propose\.intervals\[1\]: /));
  it('names an amount that is not a sum of the strengths', () =>
    expect(problems({ strengths: ['250 mg'], amounts: ['500 mg', '300 mg'] })).toEqual([expect.stringMatching(/^propose\.amounts\[1\]: 300 mg is not a sum of up to 20 of the strengths/)]));
  it('needs strengths or amounts', () => expect(problems({ amounts: undefined })).toEqual([expect.stringMatching(/^propose: needs `strengths`/)]));
  it('names a target read as population.targets are, at its own path', () =>
    expect(problems({ targets: [{ trough: { atLeast: '5 mg/L' } }, { peak: { atLeast: '3 h' } }] })[0]).toMatch(/^propose\.targets\[1\]\.peak\.atLeast: /));
  it('judges targets at steady state only', () =>
    expect(problems({ targets: [{ trough: { atLeast: '5 mg/L' }, when: 'first interval' }] })).toEqual([expect.stringMatching(/^propose\.targets\[0\]\.when: /)]));
  it('says when there is no propose block', () => {
    const { propose: _p, ...rest } = linear;
    const r = proposeRegimens(rest);
    expect(r.ok ? [] : r.problems.map((x) => x.path)).toEqual(['propose']);
  });
  it('names a misspelt field of the block', () => {
    const r = proposeRegimens({ ...linear, propose: { ...linear.propose, intervalls: ['8 h'] } });
    expect(r.ok ? [] : r.problems.map((x) => x.path)).toContain('propose');
  });
});
