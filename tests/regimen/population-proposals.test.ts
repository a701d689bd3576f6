/**
 * Population proposals (propose.basis "population"): attainment against a closed form, the
 * ranking rule, and bad input with paths (core and command line; the API in
 * tests/server/propose-population-api.test.ts).
 */
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { normalCdf } from '../../models/population/normal.ts';
import { proposeByBasis } from '../../models/regimen/propose-basis.ts';
import { POPULATION_RANKING_RULE, rankPopulation, type PopulationRankable } from '../../models/regimen/population-rank.ts';
import type { Proposal, ProposeResult } from '../../models/regimen/propose.ts';
import { TIME_TO_WINDOW_POPULATION_RULE } from '../../models/regimen/population-approach.ts';
import { runProposeCli } from '../../server/propose-cli.ts';

const limits = { subjects: 5000, runs: 50_000 };

// One compartment, IV infusion over the whole dosing interval: at steady state the level is
// constant, Css = R/CL with R = amount/interval, so trough and peak are both R/CL. With only
// clearance varying (log-normal, median CL, SD of ln CL s = √ln(1 + cv²)):
//   P(Css ≥ X) = P(CL ≤ R/X) = Φ(ln(R/(X·CL))/s)       (the log-normal CDF, common practice)
//   P(X ≤ Css ≤ Y) = Φ(ln(R/(X·CL))/s) − Φ(ln(R/(Y·CL))/s).
const CL = 4; // L/h
const cv = 0.4;
const s = Math.sqrt(Math.log(1 + cv * cv));
const X = 5; // mg/L
const Y = 8; // mg/L
const tau = 12; // h
const N = 300;
const amounts = [160, 200, 240, 300, 360]; // mg every 12 h: typical Css 3.3 … 7.5 mg/L

function infusionScenario(subjects = N, extra: Record<string, unknown> = {}) {
  return {
    title: 'One compartment, continuous infusion, clearance varying',
    compartments: [{ id: 'central', volume: '30 L' }],
    transfers: [{ from: 'central', cl: { typical: `${CL} L/h`, cv: `${cv * 100}%`, name: 'CL' } }],
    doses: [{ into: 'central', amount: '240 mg', every: `${tau} h`, duration: `${tau} h`, count: 4 }],
    output: { end: '48 h', step: '12 h' },
    population: { subjects, seed: 7 },
    propose: {
      basis: 'population',
      amounts: amounts.map((a) => `${a} mg`),
      maxUnits: 1,
      intervals: [`${tau} h`],
      durations: [`${tau} h`],
      targets: [{ trough: { atLeast: `${X} mg/L` } }, { peak: { atMost: `${Y} mg/L` } }],
      ...extra,
    },
  };
}

function propose(input: unknown): ProposeResult {
  const r = proposeByBasis(input, limits);
  if (!r.ok) throw new Error(JSON.stringify(r.problems));
  return r.value;
}

const row = (p: Proposal) => p.population as NonNullable<Proposal['population']>;

/** A small population, shared by the ranking and command-line checks. */
const small = propose(infusionScenario(60));

describe('attainment against the log-normal CDF (continuous infusion at steady state, clearance only varying)', () => {
  const r = propose(infusionScenario());
  const byAmount = (a: number) => r.proposals.find((p) => p.amount === a) as Proposal;
  const atLeast = (a: number) => normalCdf(Math.log(a / tau / (X * CL)) / s);
  const atMost = (a: number) => 1 - normalCdf(Math.log(a / tau / (Y * CL)) / s);
  const se = (p: number) => Math.sqrt((p * (1 - p)) / N);

  for (const a of amounts) {
    it(`${a} mg every ${tau} h: each target's share and the joint share within 3 Monte Carlo SE of the closed form`, () => {
      const p = row(byAmount(a));
      const exact = [atLeast(a), atMost(a), atLeast(a) + atMost(a) - 1];
      expect(Math.abs(p.targets[0].probability - exact[0])).toBeLessThanOrEqual(3 * se(exact[0]));
      expect(Math.abs(p.targets[1].probability - exact[1])).toBeLessThanOrEqual(3 * se(exact[1]));
      expect(Math.abs(p.joint.probability - exact[2])).toBeLessThanOrEqual(3 * se(exact[2]));
      // The standard error reported is the binomial one of the estimate.
      expect(p.joint.standardError).toBeCloseTo(se(p.joint.probability), 12);
      expect(p.joint.attained).toBe(Math.round(p.joint.probability * N));
    });
  }

  it('the median trough is R/CL at the median clearance, within the median\'s sampling error', () => {
    // The sample median of ln CL has SE ≈ s·√(π/2)/√N (asymptotic variance of the median, common practice); 4 SE.
    const tol = 4 * s * Math.sqrt(Math.PI / 2 / N);
    for (const a of amounts) {
      const p = row(byAmount(a));
      expect(Math.abs(Math.log(p.trough.p50 / (a / tau / CL)))).toBeLessThan(tol);
      // Trough and peak coincide for a constant level (to the solver's tolerance).
      expect(p.peak.p50 / p.trough.p50).toBeCloseTo(1, 5);
      expect(p.trough.p5).toBeLessThan(p.trough.p50);
      expect(p.trough.p95).toBeGreaterThan(p.trough.p50);
    }
  });

  it('uses the same subjects for every regimen (common random numbers): a larger amount never attains the floor less often', () => {
    const floor = amounts.map((a) => row(byAmount(a)).targets[0].attained);
    for (let k = 1; k < floor.length; k++) expect(floor[k]).toBeGreaterThanOrEqual(floor[k - 1]);
  });

  it('states its basis, the rules and both cautions', () => {
    expect(r.population?.subjects).toBe(N);
    expect(r.searched.steadyStateSolves).toBe(N * amounts.length);
    expect(r.rankingRule).toBe(POPULATION_RANKING_RULE);
    expect(r.population?.timeToWindow).toBe(TIME_TO_WINDOW_POPULATION_RULE);
    expect(r.timeToWindowDefinition).toBe(TIME_TO_WINDOW_POPULATION_RULE);
    expect(r.population?.loading).toBeNull();
    expect(r.population?.caution).toMatch(/model population .* not a patient/);
    expect(r.caution).toMatch(/clinician's review/);
    expect(r.proposals.every((p) => p.loading === null && row(p).approach.firstInterval.withLoading === null)).toBe(true);
  });
});

describe('other dose lines', () => {
  it('keep their varying quantities and correlations, deliver nothing, and leave every subject as it was', () => {
    // A second line with a varying bioavailability correlated with CL: before, its removal broke the correlation.
    const base = infusionScenario(60);
    const withLine = {
      ...base,
      compartments: [...base.compartments, { id: 'gut' }],
      transfers: [...base.transfers, { from: 'gut', to: 'central', k: '1 1/h' }],
      doses: [...base.doses, { into: 'gut', amount: '100 mg', at: '2 h', bioavailability: { typical: 0.6, cv: '20%', name: 'F' } }],
      population: { ...base.population, correlations: [{ between: ['CL', 'F'], value: 0.3 }] },
    };
    const a = small.proposals.map((p) => [p.amount, row(p).joint.probability]);
    const b = propose(withLine).proposals.map((p) => [p.amount, row(p).joint.probability]);
    // CL is the first varying quantity in both, so its draws (the first row of the Cholesky factor) are the same.
    expect(b).toEqual(a);
  });
});

describe('ranking rule', () => {
  const day = 24;
  const rows: PopulationRankable[] = [
    { amount: 500, interval: 8, duration: 1, probability: 0.8, standardError: 0.02, distance: 0.4 }, // 0
    { amount: 750, interval: 12, duration: 1, probability: 0.78, standardError: 0.021, distance: 0.1 }, // 1: within 2 SE of 0, closer to the window's middle
    { amount: 1000, interval: 24, duration: 1, probability: 0.77, standardError: 0.021, distance: 0.1 }, // 2: tied too, as close as 1 but once a day: before 1
    { amount: 1250, interval: 24, duration: 1, probability: 0.76, standardError: 0.021, distance: 0.1 }, // 7: as 2 but a larger daily amount: after 2
    { amount: 250, interval: 8, duration: 1, probability: 0.7, standardError: 0.023, distance: 0 }, // 3: 0.1 below the leader, more than 2 SE: next tier
    { amount: 250, interval: 12, duration: 1, probability: 0.7, standardError: 0.023, distance: 0 }, // 4: exact tie with 3: fewer doses a day first
    { amount: 100, interval: 24, duration: 1, probability: 0, standardError: 0, distance: 2 }, // 5
    { amount: 50, interval: 24, duration: 1, probability: 0, standardError: 0, distance: 3 }, // 6
  ];
  // Row 7 sits third in the list: move it to the end so that the indices in the comments hold.
  rows.push(rows.splice(3, 1)[0]);
  const ranked = rankPopulation(rows, day);

  it('orders by the joint share, ties within 2 SE by the typical keys (window distance, doses a day, daily amount)', () => {
    expect(ranked.order).toEqual([2, 7, 1, 0, 4, 3, 5, 6]);
    expect(ranked.tier).toEqual([1, 1, 1, 2, 2, 3, 3, 1]);
  });

  it('a difference of just over 2 SE separates, just under ties', () => {
    const pair = (gap: number) =>
      rankPopulation(
        [
          { amount: 1, interval: 8, duration: 0, probability: 0.5, standardError: 0.01, distance: 1 },
          { amount: 1, interval: 24, duration: 0, probability: 0.5 - gap, standardError: 0.01, distance: 1 },
        ],
        day,
      ).order;
    expect(pair(0.0199)).toEqual([1, 0]); // tied: once a day first
    expect(pair(0.0201)).toEqual([0, 1]); // separated: the larger share first
  });

  it('the proposals of a scenario come out in that order, ranks 1 … n', () => {
    const r = small;
    expect(r.proposals.map((p) => p.rank)).toEqual(r.proposals.map((_, i) => i + 1));
    const again = rankPopulation(
      r.proposals.map((p) => ({ ...p, probability: row(p).joint.probability, standardError: row(p).joint.standardError, distance: p.troughDistance ?? Infinity })),
      day,
    );
    expect(again.order).toEqual(r.proposals.map((_, i) => i));
    for (let i = 1; i < r.proposals.length; i++) expect(row(r.proposals[i]).tier).toBeGreaterThanOrEqual(row(r.proposals[i - 1]).tier);
  });
});

describe('bad input, with paths', () => {
  const paths = (input: unknown) => {
    const r = proposeByBasis(input, limits);
    if (r.ok) throw new Error('expected problems');
    return r.problems.map((p) => `${p.path}: ${p.message}`);
  };
  it('needs a population section', () => {
    const { population: _p, ...without } = infusionScenario();
    expect(paths(without)).toEqual([expect.stringMatching(/^propose\.basis: is "population", but the scenario has no `population` section/)]);
  });
  it('names an unknown basis', () => expect(paths(infusionScenario(N, { basis: 'everyone' }))[0]).toMatch(/^propose\.basis: /));
  it('refuses subjects over the limit', () => expect(paths(infusionScenario(5001))).toEqual([expect.stringMatching(/^population\.subjects: 5,001 subjects: population proposals take at most 5,000/)]));
  it('refuses subjects × regimens over the limit', () => {
    const r = proposeByBasis(infusionScenario(2000), { subjects: 5000, runs: 9999 });
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.problems).toEqual([{ path: 'population.subjects', message: expect.stringMatching(/^2,000 subjects × 5 regimens = 10,000 steady states \(each subject's run of each regimen from the first dose comes on top\); population proposals take at most 9,999 steady states/) }]);
  });
  it('names a bolus tried beside infusions', () =>
    expect(paths(infusionScenario(N, { durations: ['0 h', `${tau} h`] }))).toEqual([expect.stringMatching(/^propose\.durations\[0\]: a bolus \(0\) cannot be tried beside infusions/)]));
  it('names a bad field of the population section at its own path', () => {
    const bad = infusionScenario();
    expect(paths({ ...bad, population: { ...bad.population, covariates: { weight: { distribution: 'normal', mean: '70 kg', sd: '-3 kg' } } } })[0]).toMatch(/^population\.covariates\.weight/);
  });
});

describe('propose FILE with a population basis', () => {
  const folder = mkdtempSync(join(tmpdir(), 'tidemark-propose-'));
  afterAll(() => rmSync(folder, { recursive: true, force: true }));
  const write = (name: string, scenario: unknown) => writeFileSync(join(folder, name), JSON.stringify(scenario));

  it('prints the attainment table, the rule and both cautions', () => {
    write('small.json', infusionScenario(60));
    const o = runProposeCli(['small.json', '--top', '2'], { folder });
    expect(o.code).toBe(0);
    expect(o.stdout).toMatch(/regimen proposals for a population of 60 virtual subjects \(seed 7\)/);
    expect(o.stdout).toMatch(/rank\s+tier\s+amount \(mg\)\s+interval \(h\)\s+infusion \(h\)\s+all targets\s+target 1\s+target 2/);
    expect(o.stdout).toMatch(/^\s+1\s+1\s+\d+\s+12\s+12\s+\d+(\.\d)?% ± \d/m);
    expect(o.stdout).toContain('(the best 2 of 5)');
    expect(o.stdout).toContain('not a patient');
    expect(o.stdout).toContain("clinician's review");
  });
  it('gives the same proposals as JSON as the core', () => {
    write('small.json', infusionScenario(60));
    const o = runProposeCli(['small.json', '--format', 'json'], { folder });
    expect(JSON.parse(o.stdout)).toEqual(JSON.parse(JSON.stringify(small)));
  });
  it('names a missing population section and subjects over the limit (exit 1)', () => {
    const { population: _p, ...without } = infusionScenario();
    write('without.json', without);
    const o = runProposeCli(['without.json'], { folder });
    expect(o.code).toBe(1);
    expect(o.stderr).toMatch(/^propose\.basis: is "population"/m);
    write('many.json', infusionScenario(5001));
    expect(runProposeCli(['many.json'], { folder }).stderr).toMatch(/^population\.subjects: 5,001 subjects/m);
  });
});
