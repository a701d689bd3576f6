// The report's regimen proposals for a population (propose.basis "population"), read back with
// pdftotext: the rows as proposeByBasis ranks them (the report prints what the computation gave,
// formatted with the report's own fmt) and both cautions. (Over the limits the report is refused
// with the path, as every search that cannot run; the limits are tested in tests/regimen.)
import { afterAll, describe, expect, it } from 'vitest';
import { proposeByBasis } from '../../models/regimen/propose-basis.ts';
import { PROPOSAL_CAUTION, type Proposal } from '../../models/regimen/propose.ts';
import { POPULATION_CAUTION } from '../../models/population/summary.ts';
import { fmt } from '../../server/report/format.ts';
import { reportProposalLimits } from '../../server/report/proposals.ts';
import { buildReport } from '../../server/report/report.ts';
import { escapeRegExp, pdfPages, removeTempFiles } from './helpers.ts';

const now = new Date(Date.UTC(2031, 4, 17, 9, 30));

const scenario = (subjects: number) => ({
  title: 'One compartment, infusion, clearance varying',
  compartments: [{ id: 'central', volume: '30 L' }],
  transfers: [{ from: 'central', cl: { typical: '4 L/h', cv: '40%', name: 'CL' } }],
  doses: [{ into: 'central', amount: '240 mg', every: '12 h', duration: '1 h', count: 4 }],
  output: { end: '48 h', step: '12 h' },
  population: { subjects, seed: 3 },
  propose: { basis: 'population', amounts: ['200 mg', '400 mg'], maxUnits: 1, intervals: ['12 h', '24 h'], targets: [{ trough: { atLeast: '2 mg/L' } }, { peak: { atMost: '20 mg/L' } }] },
});

function flatText(s: unknown): string {
  const outcome = buildReport({ scenario: s }, { now });
  if (!outcome.ok) throw new Error(`no report: ${JSON.stringify(outcome.problems)}`);
  return pdfPages(outcome.bytes).join('\n').replace(/\s+/g, ' ');
}

const ws = (parts: string[]) => new RegExp(parts.map(escapeRegExp).join('\\s+'));
const percent = (x: { probability: number; standardError: number }) => `${fmt(Number((x.probability * 100).toFixed(1)))}% ± ${fmt(Number((x.standardError * 100).toFixed(1)))}`;

afterAll(removeTempFiles);

describe('report of population proposals', () => {
  const s = scenario(40);
  const flat = flatText(s);
  const direct = proposeByBasis(s, reportProposalLimits);
  if (!direct.ok) throw new Error(JSON.stringify(direct.problems));
  const r = direct.value;

  it('prints the first row as proposeByBasis ranks it: joint and per-target shares, trough and peak percentiles', () => {
    const first = r.proposals[0];
    const a = first.population as NonNullable<Proposal['population']>;
    expect(flat).toContain('Ranked proposals for 40 virtual subjects (seed 3) at steady state');
    expect(flat).toMatch(ws(['1', '1', fmt(first.amount), fmt(first.interval), fmt(first.duration), percent(a.joint), `1: ${percent(a.targets[0])}`]));
    // A cell's second line (5th–95th) follows the row's first lines in pdftotext's reading order.
    for (const x of [a.trough, a.peak]) {
      expect(flat).toContain(fmt(x.p50));
      expect(flat).toContain(`${fmt(x.p5)}–${fmt(x.p95)}`);
    }
    expect(r.proposals.map((p) => p.rank)).toEqual([1, 2, 3, 4]);
  });

  it('carries both cautions, the ranking rule and the time-to-window rule', () => {
    expect(flat).toContain(POPULATION_CAUTION.slice(0, 60));
    expect(flat).toContain(PROPOSAL_CAUTION.slice(0, 60));
    expect(flat).toContain('Ranking rule: the share of subjects meeting every target jointly');
    expect(flat).toContain('Time to the window: for each subject, the regimen given from empty');
  });
});

describe('report of population proposals whose loading dose the amounts cannot give', () => {
  // Slow clearance: the loading dose of 400 mg every 12 h is 400/(1 − e^{−kτ}) ≈ 3,500 mg (Gibaldi & Perrier, from memory), above every listed amount.
  const s = { ...scenario(20), transfers: [{ from: 'central', cl: '0.3 L/h' }], propose: { ...scenario(20).propose, loading: true } };
  const direct = proposeByBasis(s, reportProposalLimits);
  if (!direct.ok) throw new Error(JSON.stringify(direct.problems));

  it('prints the row\'s note beside the loading dose given', () => {
    const note = direct.value.proposals.find((p) => p.amount === 400 && p.interval === 12)?.loading?.note as string;
    expect(note).toMatch(/^capped at 400 mg: the strengths give no more; computed \d+ mg$/);
    expect(flatText(s)).toContain(`(${note})`);
  });
});
