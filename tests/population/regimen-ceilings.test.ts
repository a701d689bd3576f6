/**
 * A regimen grid whose targets are all ceilings (peak at most …): no share of "every level
 * target" is shown — none asks for a level, and a share of 100% ± 0% for every regimen would
 * read as a result — and the best regimen is the one keeping the ceilings most often, as its
 * rule says.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { simulatePopulation, type PopulationResult } from '../../models/population/population.ts';
import { populationToText } from '../../server/population-text.ts';

const demo = JSON.parse(readFileSync(new URL('../../samples/halvorin-population-infusion.json', import.meta.url), 'utf8'));

function run(targets: unknown[]): PopulationResult {
  const s = JSON.parse(JSON.stringify(demo));
  s.population.subjects = 200;
  delete s.population.residual;
  s.output.end = '2 day';
  s.output.step = '1 h';
  s.population.targets = targets;
  // 1500 mg listed first: it keeps the ceiling in more than 10% of subjects, but less often than 1000 mg.
  s.population.regimens = { amounts: ['1500 mg', '1000 mg', '2000 mg'], intervals: ['12 h'], ceilingAtLeast: '10%' };
  const r = simulatePopulation(s);
  if (!r.ok) throw new Error(JSON.stringify(r.problems));
  return r.value;
}

describe('a regimen grid of ceiling targets only', () => {
  const r = run([{ peak: { atMost: '60 mg/L' } }]);
  const grid = r.regimens as NonNullable<PopulationResult['regimens']>;

  it('has no joint share of level targets (null in JSON)', () => {
    for (const row of grid.rows) expect(row.joint).toBeNull();
    expect(JSON.parse(JSON.stringify(r)).regimens.rows[0].joint).toBeNull();
  });

  it('ranks by the share keeping every ceiling, and says so in the rule', () => {
    // With one target, keeping every ceiling is attaining that target: the two counts agree exactly.
    for (const row of grid.rows) expect(row.ceiling.probability).toBe(row.attainment[0].probability);
    // The scenario's own regimen (1000 mg every 12 h over 1 h) on the same subjects (common random numbers).
    expect(grid.rows[1].ceiling.probability).toBe(r.attainment[0].probability);
    const shares = grid.rows.map((row) => row.ceiling.probability);
    const eligible = shares.map((p, k) => (p >= 0.1 ? k : -1)).filter((k) => k >= 0);
    const expected = eligible.reduce((b, k) => (shares[k] > shares[b] ? k : b), eligible[0]);
    // The test's premise: the first eligible regimen is not the one keeping the ceiling most often.
    expect(eligible[0]).not.toBe(expected);
    expect(grid.best).toBe(expected);
    expect(grid.rule).toMatch(/largest share of subjects keeping every ceiling target/);
    expect(grid.rule).toMatch(/no target asks for at least a level/);
  });

  it('prints a dash for the joint share in the text', () => {
    const text = populationToText(r);
    const rows = text.split('\n').filter((line) => / mg every 12 h over 1 h {2,}/.test(line));
    expect(rows).toHaveLength(3);
    for (const line of rows) expect(line).toMatch(/ — {2,}\d+\.\d%$/);
    expect(text).not.toMatch(/100\.0% ± 0\.0%/);
    expect(text).toContain(`best: ${grid.rows[grid.best as number].regimen}`);
  });

  it('with a level target besides, the joint share is back and the rule ranks by it', () => {
    const mixed = run([{ trough: { atLeast: '2 mg/L' } }, { peak: { atMost: '60 mg/L' } }]).regimens as NonNullable<PopulationResult['regimens']>;
    for (const row of mixed.rows) {
      expect(row.joint).not.toBeNull();
      // One level target: its joint share is that target's attainment.
      expect(row.joint?.probability).toBe(row.attainment[0].probability);
    }
    expect(mixed.rule).toMatch(/^the regimen with the largest share of subjects meeting every target that asks for at least a level/);
  });
});
