/**
 * The subject: covariates given and derived by published formulas, doses per body size, and
 * covariate relations on model quantities. Expected values were computed from each published
 * formula separately, in Python (double precision), not with the engine's code.
 */
import { describe, expect, it } from 'vitest';
import { normaliseScenario } from '../../models/scenario/normalize.ts';
import { simulate } from '../../models/simulate.ts';
import { readSubject } from '../../models/subject/subject.ts';

const subjectOf = (s: Record<string, unknown>) => {
  const r = readSubject(s as never);
  expect(r.problems).toEqual([]);
  return r.covariates;
};

describe('derived covariates', () => {
  it('body surface area by Du Bois & Du Bois (1916): 70 kg, 175 cm → 1.84814 m²', () => {
    // 0.007184 · 70^0.425 · 175^0.725 = 1.8481430181213463 (Python); about 1.85 m² (from memory, the usual 70 kg adult).
    expect(subjectOf({ weight: '70 kg', height: '175 cm' }).bsa.value).toBeCloseTo(1.8481430181213463, 12);
    // Units are converted first: 154.324 lb and 68.8976 in are 70 kg and 175 cm.
    expect(subjectOf({ weight: '154.3236 lb', height: '68.89764 inch' }).bsa.value).toBeCloseTo(1.84814, 4);
  });

  it('creatinine clearance by Cockcroft & Gault (1976), with the sex factor', () => {
    // (140 − 60) · 72 / (72 · 1.0) = 80 mL/min for a man; × 0.85 = 68 mL/min for a woman.
    expect(subjectOf({ age: '60 year', weight: '72 kg', serumCreatinine: '1 mg/dL', sex: 'male' }).crcl.value).toBeCloseTo(80, 12);
    expect(subjectOf({ age: '60 year', weight: '72 kg', serumCreatinine: '1 mg/dL', sex: 'female' }).crcl.value).toBeCloseTo(68, 12);
    // The subject: 54 years, 72 kg, 0.9 mg/dL, female: (86 · 72)/(72 · 0.9) · 0.85 = 81.2222 mL/min.
    expect(subjectOf({ age: '54 year', weight: '72 kg', serumCreatinine: '0.9 mg/dL', sex: 'female' }).crcl.value).toBeCloseTo(81.22222222222223, 10);
  });

  it('serum creatinine in µmol/L through its molar mass, 113.12 g/mol', () => {
    // 80 µmol/L · 113.12 g/mol = 0.90496 mg/dL (1 mg/dL ≈ 88.4 µmol/L, the usual laboratory factor).
    expect(subjectOf({ serumCreatinine: '80 umol/L' }).serumCreatinine.value).toBeCloseTo(0.90496, 12);
  });

  it('ideal body weight by Devine (1974) and lean body weight by Janmahasatian et al. (2005)', () => {
    const man = subjectOf({ weight: '70 kg', height: '175 cm', sex: 'male' });
    // 50 + 2.3 · (175/2.54 − 60) = 70.46456692913384 kg.
    expect(man.ibw.value).toBeCloseTo(70.46456692913384, 12);
    // 9270 · 70 / (6680 + 216 · BMI), BMI = 70/1.75² = 22.857: 55.857107722577474 kg.
    expect(man.lbw.value).toBeCloseTo(55.857107722577474, 12);
    const woman = subjectOf({ weight: '72 kg', height: '165 cm', sex: 'female' });
    expect(woman.ibw.value).toBeCloseTo(56.90944881889762, 12);
    expect(woman.lbw.value).toBeCloseTo(43.81570980587897, 12);
  });

  it('a covariate needs what it is derived from', () => {
    const c = subjectOf({ weight: '70 kg' });
    expect(c.bsa).toBeUndefined();
    expect(c.crcl).toBeUndefined();
  });
});

const oneCompartment = (extra: Record<string, unknown>) => ({
  title: 'one compartment',
  compartments: [{ id: 'central', volume: 20 }],
  transfers: [{ from: 'central', cl: 4.2 }],
  doses: [{ into: 'central', amount: 100 }],
  output: { end: 200, step: 1 },
  ...extra,
});

function ok(scenario: unknown) {
  const r = simulate(scenario);
  if (!r.ok) throw new Error(JSON.stringify(r.problems));
  return r.value;
}

function problemsOf(scenario: unknown) {
  const r = normaliseScenario(scenario);
  return r.ok ? [] : r.problems;
}

describe('doses per body size', () => {
  it('5 mg/kg for 72 kg is 360 mg', () => {
    const r = ok(oneCompartment({ subject: { weight: '72 kg' }, doses: [{ into: 'central', amount: '5 mg/kg' }] }));
    expect(r.diagnostics.massBalance.dosed).toBeCloseTo(360, 12);
    // A bolus: C0 = dose/V (Rowland & Tozer ch. 3).
    expect(r.metrics.compartments[0].overall.cmax).toBeCloseTo(360 / 20, 10);
  });

  it('100 mg/m2 for 72 kg and 165 cm is 100 × 1.79229 m² (Du Bois)', () => {
    const r = ok(oneCompartment({ subject: { weight: '72 kg', height: '165 cm' }, doses: [{ into: 'central', amount: '100 mg/m2' }] }));
    expect(r.diagnostics.massBalance.dosed).toBeCloseTo(179.22908770765824, 9);
  });

  it('a per-kg dose without a weight is a problem at the dose amount', () => {
    expect(problemsOf(oneCompartment({ doses: [{ into: 'central', amount: '5 mg/kg' }] }))).toEqual([
      { path: 'doses[0].amount', message: 'is per kg of body weight, but the scenario gives no subject.weight' },
    ]);
    expect(problemsOf(oneCompartment({ subject: { weight: '72 kg' }, doses: [{ into: 'central', amount: '100 mg/m2' }] }))[0].path).toBe('doses[0].amount');
  });
});

describe('covariate relations', () => {
  it('allometric clearance: 4.2 L/h at 70 kg, power 0.75, for 35 kg is 4.2 · 0.5^0.75', () => {
    const r = ok(
      oneCompartment({
        subject: { weight: '35 kg' },
        transfers: [{ from: 'central', cl: { typical: '4.2 L/h', name: 'CL', covariates: [{ on: 'weight', power: 0.75, reference: '70 kg' }] } }],
        output: { end: 2000, step: 1 },
      }),
    );
    const cl = 4.2 * 0.5 ** 0.75;
    // AUC0–∞ = dose/CL (Rowland & Tozer ch. 3); 2000 h is over 100 half-lives, so AUC to the end equals it.
    expect(r.metrics.compartments[0].overall.auc).toBeCloseTo(100 / cl, 8);
    expect(r.subject?.adjustments).toEqual([
      { path: 'transfers[0].cl', name: 'CL', typical: 4.2, value: expect.closeTo(2.4973349415057142, 12), relations: ['× (weight / 70 kg)^0.75'] },
    ]);
  });

  it('linear and exponential relations, and a multiplier per category', () => {
    const r = ok(
      oneCompartment({
        subject: { age: '54 year', sex: 'female', albumin: '3.5 g/dL' },
        compartments: [
          {
            id: 'central',
            volume: {
              typical: '20 L',
              covariates: [
                { on: 'age', linear: 0.01, reference: '40 year' },
                { on: 'albumin', exponential: -0.2, reference: '4 g/dL' },
                { on: 'sex', factors: { female: 0.85 } },
              ],
            },
          },
        ],
      }),
    );
    const expected = 20 * (1 + 0.01 * 14) * Math.exp(-0.2 * -0.5) * 0.85;
    expect(r.subject?.adjustments[0].value).toBeCloseTo(expected, 12);
    expect(r.metrics.compartments[0].overall.cmax).toBeCloseTo(100 / expected, 10);
  });

  it('a bioavailability with relations stays a fraction', () => {
    const scenario = (sex: string) =>
      oneCompartment({
        subject: { sex },
        doses: [{ into: 'central', amount: 100, bioavailability: { typical: '90%', covariates: [{ on: 'sex', factors: { male: 1.2 } }] } }],
      });
    expect(ok(scenario('female')).diagnostics.massBalance.dosed).toBeCloseTo(90, 12);
    expect(problemsOf(scenario('male'))).toEqual([{ path: 'doses[0].bioavailability', message: expect.stringMatching(/is 1\.08 for this subject .* cannot exceed 1/) }]);
  });

  it.each([
    [{ on: 'weight', power: 0.75, reference: '70 kg' }, {}, 'transfers[0].cl.covariates[0].on', /the subject has no covariate 'weight' \(give subject\.weight\)/],
    [{ on: 'crcl', power: 1, reference: '100 mL/min' }, { weight: '70 kg' }, 'transfers[0].cl.covariates[0].on', /give subject\.age, subject\.weight, subject\.serumCreatinine and subject\.sex/],
    [{ on: 'weight', power: 0.75 }, { weight: '70 kg' }, 'transfers[0].cl.covariates[0].reference', /is required/],
    [{ on: 'weight', power: 0.75, linear: 0.1, reference: '70 kg' }, { weight: '70 kg' }, 'transfers[0].cl.covariates[0]', /exactly one of/],
    [{ on: 'weight', power: 0.75, reference: '70 L' }, { weight: '70 kg' }, 'transfers[0].cl.covariates[0].reference', /expected a unit like 'kg', got 'L'/],
    [{ on: 'sex', power: 1, reference: 1 }, { sex: 'male' }, 'transfers[0].cl.covariates[0].on', /is a category/],
    [{ on: 'weight', linear: -0.1, reference: '70 kg' }, { weight: '90 kg' }, 'transfers[0].cl.covariates[0]', /multiplier of -1 .* must stay positive/],
  ])('%j with subject %j is a problem at its path', (relation, subject, path, message) => {
    const found = problemsOf(oneCompartment({ subject, transfers: [{ from: 'central', cl: { typical: 4.2, covariates: [relation] } }] }));
    expect(found).toHaveLength(1);
    expect(found[0].path).toBe(path);
    expect(found[0].message).toMatch(message);
  });

  it('the subject with its derived covariates is in the result', () => {
    const r = ok(oneCompartment({ subject: { weight: '72 kg', height: '165 cm', age: '54 year', sex: 'female', serumCreatinine: '0.9 mg/dL' } }));
    expect(Object.keys(r.subject?.covariates ?? {}).sort()).toEqual(['age', 'bmi', 'bsa', 'crcl', 'height', 'ibw', 'lbw', 'serumCreatinine', 'sex', 'weight']);
    expect(r.subject?.covariates.crcl.rule).toMatch(/Cockcroft & Gault 1976/);
  });

  it('a scenario without a subject is unchanged', () => {
    expect(ok(oneCompartment({})).subject).toBeNull();
  });
});
