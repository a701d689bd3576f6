/**
 * The subject's covariates: what the scenario gives (weight, height, age, sex, serum
 * creatinine and any named covariate of its own), each in a fixed unit, and what the
 * published formulas derive from them (body-mass index, body surface area, creatinine
 * clearance, ideal and lean body weight). Covariate relations and per-size doses read these.
 */
import { covariateNameProblem } from '../scenario/covariate-name.ts';
import type { Problem } from '../scenario/problems.ts';
import type { Sex, Subject } from '../scenario/schema.ts';
import { convertToUnit, unitWritten } from '../scenario/units.ts';
import { bodyMassIndex, bodySurfaceArea, idealBodyWeight, leanBodyWeight } from './body-size.ts';
import { creatinineClearance, CREATININE_MG_DL_PER_UMOL_L } from './renal-function.ts';

export interface Covariate {
  /** A number in `unit`, or a category word (sex, or a category of the subject's own). */
  value: number | string;
  /** The unit the number is in (mathjs spelling); null for a category or a bare number. */
  unit: string | null;
  /** For a derived covariate, the rule it comes from. */
  rule: string | null;
}

export type Covariates = Record<string, Covariate>;

/** The given covariates with fixed units, and the words a message uses for each. */
const given: Record<'weight' | 'height' | 'age' | 'serumCreatinine', { unit: string; words: string }> = {
  weight: { unit: 'kg', words: 'a mass unit (e.g. kg)' },
  height: { unit: 'cm', words: 'a length unit (e.g. cm)' },
  age: { unit: 'year', words: 'a time unit (e.g. year)' },
  serumCreatinine: { unit: 'mg/dL', words: 'a concentration in mg/dL or umol/L' },
};

/** Names the derived covariates take; the subject may not use them for covariates of its own. */
export const derivedNames = ['bmi', 'bsa', 'crcl', 'ibw', 'lbw'] as const;

function readGiven(name: keyof typeof given, q: number | string, problems: Problem[]): number | null {
  const { unit, words } = given[name];
  // Serum creatinine in µmol/L is a molar concentration: convert with creatinine's molar mass.
  if (name === 'serumCreatinine' && typeof q === 'string' && /mol\s*\/\s*L$/i.test(unitWritten(q) ?? '')) {
    const molar = convertToUnit(q, 'umol/L', words);
    if (!molar.ok) {
      problems.push({ path: `subject.${name}`, message: molar.message });
      return null;
    }
    return positive(name, molar.value * CREATININE_MG_DL_PER_UMOL_L, problems);
  }
  const converted = convertToUnit(q, unit, words);
  if (!converted.ok) {
    problems.push({ path: `subject.${name}`, message: converted.message });
    return null;
  }
  return positive(name, converted.value, problems);
}

function positive(name: string, v: number, problems: Problem[]): number | null {
  if (v > 0) return v;
  problems.push({ path: `subject.${name}`, message: 'must be positive' });
  return null;
}

/** Reads the subject into covariates (given and derived), or the problems found. */
export function readSubject(subject: Subject | undefined): { covariates: Covariates; problems: Problem[] } {
  const covariates: Covariates = {};
  const problems: Problem[] = [];
  if (!subject) return { covariates, problems };
  const numbers: Partial<Record<keyof typeof given, number>> = {};
  for (const name of Object.keys(given) as (keyof typeof given)[]) {
    const q = subject[name];
    if (q === undefined) continue;
    const v = readGiven(name, q, problems);
    if (v !== null) {
      numbers[name] = v;
      covariates[name] = { value: v, unit: given[name].unit, rule: null };
    }
  }
  const sex: Sex | undefined = subject.sex;
  if (sex) covariates.sex = { value: sex, unit: null, rule: null };

  for (const [name, q] of Object.entries(subject)) {
    if (name in given || name === 'sex' || q === undefined) continue;
    const badName = covariateNameProblem(name);
    if (badName !== null) {
      problems.push({ path: `subject.${name}`, message: badName });
      continue;
    }
    if ((derivedNames as readonly string[]).includes(name)) {
      problems.push({ path: `subject.${name}`, message: `'${name}' is derived from the subject's other covariates; give those instead` });
      continue;
    }
    // A string without a leading number is a category word; a number with a unit keeps that unit.
    if (typeof q === 'string' && !/^\s*[-+]?(\d|\.\d)/.test(q)) {
      covariates[name] = { value: q.trim(), unit: null, rule: null };
      continue;
    }
    const unit = unitWritten(q);
    const converted = unit === null ? convertToUnit(q, '1', 'a number') : convertToUnit(q, unit, `a unit like '${unit}'`);
    if (!converted.ok) {
      problems.push({ path: `subject.${name}`, message: converted.message });
      continue;
    }
    covariates[name] = { value: converted.value, unit, rule: null };
  }

  const { weight, height, age, serumCreatinine } = numbers;
  if (weight !== undefined && height !== undefined) {
    covariates.bmi = { value: bodyMassIndex(weight, height), unit: 'kg/m^2', rule: 'weight / height²' };
    covariates.bsa = { value: bodySurfaceArea(weight, height), unit: 'm^2', rule: 'Du Bois & Du Bois 1916: 0.007184 · weight^0.425 · height^0.725' };
    if (sex) {
      covariates.lbw = { value: leanBodyWeight(weight, height, sex), unit: 'kg', rule: 'Janmahasatian et al. 2005' };
    }
  }
  if (height !== undefined && sex) {
    covariates.ibw = { value: idealBodyWeight(height, sex), unit: 'kg', rule: 'Devine 1974: 50 kg (men) or 45.5 kg (women) + 2.3 kg per inch over 5 ft' };
  }
  if (age !== undefined && weight !== undefined && serumCreatinine !== undefined && sex) {
    covariates.crcl = {
      value: creatinineClearance(age, weight, serumCreatinine, sex),
      unit: 'mL/min',
      rule: 'Cockcroft & Gault 1976: (140 − age) · weight / (72 · serum creatinine), × 0.85 for women',
    };
  }
  return { covariates, problems };
}

/** What a covariate needs that the subject lacks, for a message ("needs subject.weight and subject.height"). */
export function missingFor(name: string): string {
  const needs: Record<string, string> = {
    bmi: 'subject.weight and subject.height',
    bsa: 'subject.weight and subject.height',
    lbw: 'subject.weight, subject.height and subject.sex',
    ibw: 'subject.height and subject.sex',
    crcl: 'subject.age, subject.weight, subject.serumCreatinine and subject.sex',
  };
  return needs[name] ?? `subject.${name}`;
}
