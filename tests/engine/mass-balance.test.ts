/**
 * A run whose own mass balance fails is refused with a problem naming the field behind it,
 * never returned as a plain success; where the cause can be removed (an infusion shorter than
 * the schedule's time resolution), it is, and the dose is kept.
 */
import { readFileSync, readdirSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { simulate } from '../../models/simulate.ts';

type Scenario = Record<string, any>;
const brennock: Scenario = JSON.parse(readFileSync('samples/brennock-oral-bid.json', 'utf8'));

function variant(change: (s: Scenario) => void): Scenario {
  const s = structuredClone(brennock);
  change(s);
  return s;
}

function refused(s: Scenario): { path: string; message: string } {
  const r = simulate(s);
  expect(r.ok).toBe(false);
  if (r.ok) throw new Error('expected a refusal');
  expect(r.problems).toHaveLength(1);
  return r.problems[0];
}

describe('extreme volumes and rate constants are refused, naming the field', () => {
  // Before: V 1e-15 L gave AUC 277.6 (correct 1133) with a mass-balance error of 0.82, as a success.
  it.each([1e-15, 1e-18, 1e-50])('central volume %s L', (volume) => {
    const p = refused(variant((s) => (s.compartments[1].volume = volume)));
    expect(p.path).toBe('transfers[1].cl');
    expect(p.message).toMatch(/^the mass balance fails: dosed 4760 mg/);
    expect(p.message).toMatch(/volume 1\.000e-\d+ L/);
  });

  it.each([1e15, 1e20])('elimination rate constant %s 1/h', (k) => {
    const p = refused(variant((s) => (s.transfers[1] = { from: 'central', k })));
    expect(p.path).toBe('transfers[1].k');
    expect(p.message).toMatch(/mass balance fails/);
  });
});

describe('infusions shorter than the time resolution are given as boluses, not lost', () => {
  // Before: start and end merged into one breakpoint; Cmax, eliminated and remaining were all 0.
  const oneDose = (duration: string, at: string, end: string) =>
    variant((s) => {
      s.doses = [{ into: 'central', amount: '4760 mg', at, duration }];
      s.output = { end, step: '1 h' };
    });

  it.each([
    ['1 ns', '0 h', '7 day'],
    ['1 ns', '7 day', '14 day'],
    ['30 us', '365 day', '372 day'],
  ])('%s at %s', (duration, at, end) => {
    const r = simulate(oneDose(duration, at, end));
    expect(r.ok).toBe(true);
    if (!r.ok) return;
    const mb = r.value.diagnostics.massBalance;
    expect(mb.dosed).toBe(4760);
    expect(mb.relativeError).toBeLessThan(1e-12);
    const central = r.value.metrics.compartments.find((c) => c.compartment === 'central')!.overall;
    // A bolus into one compartment: C0 = dose/V and AUC0–∞ = dose/CL (Rowland & Tozer,
    // Clinical Pharmacokinetics and Pharmacodynamics, 4th ed., ch. 3); the week after the dose
    // leaves e^{-16.8} ≈ 5e-8 of it, so AUC to the end is within 1e-7 of dose/CL.
    expect(central.cmax).toBeCloseTo(4760 / 42, 9);
    expect(Math.abs(central.auc / (4760 / 4.2) - 1)).toBeLessThan(1e-7);
    expect(r.value.diagnostics.warnings.join('\n')).toMatch(/doses\[0\]: an infusion of .* is shorter than the time resolution .* and is given as a bolus/);
  });

  it('an infusion just longer than the resolution stays an infusion', () => {
    const r = simulate(oneDose('1 s', '0 h', '7 day'));
    expect(r.ok).toBe(true);
    if (!r.ok) return;
    expect(r.value.diagnostics.warnings).toEqual([]);
    expect(r.value.events.map((e) => e.kind)).toEqual(['infusion-start', 'infusion-end']);
    expect(r.value.diagnostics.massBalance.relativeError).toBeLessThan(1e-12);
  });
});

describe('overflow and impossible spans are refused at their field', () => {
  it('amount 1e308 mg overflows the sum of doses', () => {
    // Before: dosed, AUC and eliminated came back as null in a successful result.
    const p = refused(variant((s) => (s.doses[0].amount = 1e308)));
    expect(p.path).toBe('doses[0].amount');
    expect(p.message).toMatch(/overflow double-precision arithmetic/);
  });

  it('end 1e308 is a problem at output.end, not a solver failure', () => {
    for (const output of [{ end: 1e308 }, { end: 1e308, step: 1e306 }, { end: '1e12 day' }]) {
      const p = refused(variant((s) => (s.output = output)));
      expect(p.path).toBe('output.end');
      expect(p.message).toMatch(/beyond the longest Tidemark simulates/);
    }
  });
});

describe('no false refusals', () => {
  it.each(readdirSync('samples').filter((f) => f.endsWith('.json')))('%s with every adaptive and exact method', (file) => {
    const sample: Scenario = JSON.parse(readFileSync(`samples/${file}`, 'utf8'));
    for (const method of ['auto', 'dopri5', 'dop853', 'rosenbrock']) {
      const r = simulate({ ...sample, solver: { method, rtol: 1e-6, atol: 1e-8 } });
      expect(r.ok, `${file} ${method}`).toBe(true);
    }
  });
});
