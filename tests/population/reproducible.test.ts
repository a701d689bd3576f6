/**
 * A population is a function of (scenario, seed): the same seed gives the same numbers, any
 * split of the subjects into batches gives the same result, and a cv of 0 gives exactly the
 * typical subject's single run.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { figureColumn } from '../../models/population/layout.ts';
import { planPopulation, runBatch, simulatePopulation, summarise, batchRanges, shardRange } from '../../models/population/population.ts';
import { simulate } from '../../models/simulate.ts';

const demo = JSON.parse(readFileSync(new URL('../../samples/halvorin-population-infusion.json', import.meta.url), 'utf8'));
const small = { ...demo, output: { ...demo.output, step: '1 h' }, population: { ...demo.population, subjects: 30, regimens: { amounts: ['500 mg', '1000 mg'], intervals: ['12 h'] } } };

function ok<T>(o: { ok: true; value: T } | { ok: false; problems: unknown }): T {
  if (!o.ok) throw new Error(JSON.stringify(o.problems));
  return o.value;
}

describe('reproducibility', () => {
  const whole = ok(simulatePopulation(small));

  it('the same seed gives the same result; another seed another', () => {
    expect(ok(simulatePopulation(small))).toEqual(whole);
    const other = ok(simulatePopulation(small, { seed: 12345 }));
    expect(other.bands.central['50']).not.toEqual(whole.bands.central['50']);
  });

  it('batches of any split, summarised in any order, give exactly the single run', () => {
    const plan = ok(planPopulation(small));
    for (const parts of [2, 3, 7]) {
      const batches = batchRanges(30, parts).map((r) => ok(runBatch(plan, r.first, r.count)));
      expect(ok(summarise(plan, batches.reverse()))).toEqual(whole);
    }
  });

  it('shard ranges cover the subjects once, in order', () => {
    for (const of of [1, 3, 7, 30, 31]) {
      let next = 0;
      for (let i = 1; i <= of; i++) {
        const r = shardRange(30, i, of);
        expect(r.first).toBe(next);
        next += r.count;
      }
      expect(next).toBe(30);
    }
  });

  it('parts that miss or repeat subjects are refused, naming them', () => {
    const plan = ok(planPopulation(small));
    const a = ok(runBatch(plan, 0, 10));
    const b = ok(runBatch(plan, 20, 10));
    const missing = summarise(plan, [a, b]);
    expect(missing.ok).toBe(false);
    if (!missing.ok) expect(missing.problems[0].message).toContain('subjects 10 to 19 are missing');
    const twice = summarise(plan, [a, a, ok(runBatch(plan, 10, 20))]);
    expect(twice.ok).toBe(false);
    if (!twice.ok) expect(twice.problems[0].message).toContain('subject 0 appears twice');
  });

  it('a subject draws the same covariates and effects in every regimen (common random numbers)', () => {
    // With the amount doubled and everything linear, every subject's steady-state AUC doubles exactly.
    const plan = ok(planPopulation(small));
    const batch = ok(runBatch(plan, 0, 30));
    const layout = plan.regimenLayout;
    if (!layout) throw new Error('no regimen layout');
    const col = figureColumn(layout, 0, 0, 'auc');
    for (let s = 0; s < 30; s++) {
      const a500 = batch.regimenFigures[(0 * 30 + s) * layout.columns + col];
      const a1000 = batch.regimenFigures[(1 * 30 + s) * layout.columns + col];
      expect(a1000 / a500).toBeCloseTo(2, 10);
    }
  });
});

describe('a cv of 0 is the typical subject', () => {
  // Without covariate draws and with every cv 0, each virtual subject is the scenario's subject.
  const scenario = JSON.parse(JSON.stringify(demo));
  scenario.compartments[0].volume.cv = '0%';
  scenario.transfers[0].cl.cv = 0;
  scenario.population = { subjects: 3, seed: 1, targets: [{ trough: { atLeast: '8 mg/L' } }] };
  const population = ok(simulatePopulation(scenario));
  const { population: _p, ...single } = scenario;
  const one = ok(simulate(single));

  it('every band equals the single run at the output times, to the single precision the bands are kept in', () => {
    const c = one.compartments.find((s) => s.id === 'central')?.concentration;
    if (!c) throw new Error('no concentration');
    population.times.forEach((t, j) => {
      // The single run reports both sides of a dose; the bands are read just after it.
      let row = -1;
      for (let r = 0; r < one.times.length; r++) if (one.times[r] === t) row = r;
      for (const q of ['5', '50', '95']) expect(population.bands.central[q][j]).toBe(Math.fround(c[row]));
    });
  });

  it('the steady-state figures equal the single run', () => {
    const steady = one.metrics.steadyState?.compartments.find((c) => c.compartment === 'central');
    if (!steady) throw new Error('no steady state');
    const figures = population.exposure.central as Record<string, { percentiles: Record<string, number> }>;
    expect(figures.trough.percentiles['50']).toBe(steady.trough);
    expect(figures.cmax.percentiles['95']).toBe(steady.cmax);
    expect(figures.auc.percentiles['5']).toBe(steady.auc);
    expect(population.attainment[0].probability).toBe(steady.trough >= 8 ? 1 : 0);
    expect(population.attainment[0].standardError).toBe(0);
  });
});
