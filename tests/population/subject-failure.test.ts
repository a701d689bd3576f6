/**
 * A covariate the population gives a virtual subject that breaks it is reported where the user
 * can change it — the distribution that drew it, or the table row — with the value it took, and
 * without the follow-on problems of everything read from it (relations, derived covariates).
 */
import { describe, expect, it } from 'vitest';
import { planPopulation, runBatch, simulatePopulation } from '../../models/population/population.ts';
import { subjectCovariates } from '../../models/population/covariates.ts';
import { SubjectRandom } from '../../models/population/random.ts';
import { edited } from './halvorin.ts';


describe('a covariate that breaks a virtual subject', () => {
  it('drawn: named at population.covariates.weight with the value drawn, the relations that read it left out', () => {
    // normal(60 kg, 20 kg) without a lower bound: P(weight ≤ 0) = Φ(−3) ≈ 0.00135, so some of 400 subjects draw one.
    const s = edited((x) => {
      x.population.subjects = 400;
      x.population.covariates.weight = { distribution: 'normal', mean: '60 kg', sd: '20 kg' };
    });
    const r = simulatePopulation(s);
    expect(r.ok).toBe(false);
    if (r.ok) return;
    expect(r.problems).toHaveLength(1);
    const [p] = r.problems;
    expect(p.path).toBe('population.covariates.weight');
    const m = /^virtual subject (\d+) \(seed 20261202\) drew weight = (-?[\d.e+-]+) kg: must be positive \(give the distribution a `min` above 0\)$/.exec(p.message);
    expect(m, p.message).not.toBeNull();
    // The subject named is the first whose drawn weight is not positive, and the value is its draw (6 significant digits).
    const plan = planPopulation(edited((x) => (x.population.covariates.weight = { distribution: 'normal', mean: '60 kg', sd: '20 kg', min: '1 kg' })));
    expect(plan.ok).toBe(true);
    if (!plan.ok || !m) return;
    const covariates = { ...plan.value.covariates, drawn: plan.value.covariates.drawn.map((c) => (c.name === 'weight' && c.kind === 'number' ? { ...c, distribution: { kind: 'normal' as const, mean: 60, sd: 20, min: null, max: null } } : c)) };
    const weights = Array.from({ length: 400 }, (_, i) => parseFloat(String(subjectCovariates(covariates, undefined, i, new SubjectRandom(20261202, i)).weight)));
    const first = weights.findIndex((w) => !(w > 0));
    expect(Number(m[1])).toBe(first);
    expect(Number(m[2])).toBeCloseTo(weights[first], 4);
    expect(r.problems.some((q) => /has no covariate/.test(q.message))).toBe(false);
  });

  it('from a table row: named at that row and column', () => {
    const row = (weight: string) => ({ weight, height: '170 cm', age: '40 year', sex: 'male', serumCreatinine: '0.9 mg/dL' });
    const s = edited((x) => {
      x.population.subjects = 4;
      delete x.population.covariates;
      x.population.covariateTable = { rows: [row('70 kg'), row('80 kg'), row('60 kg')] };
    });
    const plan = planPopulation(s);
    expect(plan.ok).toBe(true);
    if (!plan.ok) return;
    // Rows are checked when planned; a row changed afterwards stands for one that only fails in its subject's model.
    (plan.value.covariates.rows as Record<string, unknown>[])[1].weight = '-3 kg';
    const batch = runBatch(plan.value, 0, 4);
    expect(batch.ok).toBe(false);
    if (batch.ok) return;
    // Rows are taken in turn: subject 1 takes row 1.
    expect(batch.problems).toEqual([{ path: 'population.covariateTable.rows[1].weight', message: 'virtual subject 1 (seed 20261202) took weight = -3 kg: must be positive' }]);
  });

  it('a problem that is not a covariate\'s keeps its own path', () => {
    const s = edited((x) => (x.population.subjects = 3));
    const plan = planPopulation(s);
    expect(plan.ok).toBe(true);
    if (!plan.ok) return;
    // A scenario subject's own bad value (normally refused when planned) stays at subject.weight.
    const broken = { ...plan.value, scenario: { ...plan.value.scenario, subject: { ...plan.value.scenario.subject, weight: '-1 kg' } }, covariates: { ...plan.value.covariates, drawn: plan.value.covariates.drawn.filter((c) => c.name !== 'weight') } };
    const batch = runBatch(broken, 0, 1);
    expect(batch.ok).toBe(false);
    if (!batch.ok) expect(batch.problems).toEqual([{ path: 'subject.weight', message: 'virtual subject 0 (seed 20261202): must be positive' }]);
  });
});
