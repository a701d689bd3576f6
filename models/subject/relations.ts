/**
 * Covariate relations: each turns a quantity's typical value (its value at the reference
 * covariate) into the value for this subject by a multiplier —
 *   power        (c / ref)^b            allometric scaling, e.g. b = 0.75 on weight
 *   linear       1 + b · (c − ref)
 *   exponential  exp(b · (c − ref))
 *   factors      f[category]            a multiplier per category (1 for one not listed)
 * (the usual forms of covariate models; Mould & Upton 2012, CPT Pharmacometrics Syst Pharmacol 1:e6).
 */
import type { Problem } from '../scenario/problems.ts';
import type { CovariateRelation } from '../scenario/schema.ts';
import { convertToUnit } from '../scenario/units.ts';
import { missingFor, type Covariates } from './subject.ts';

export interface AppliedRelation {
  /** The relation in words, e.g. "× (weight / 70 kg)^0.75". */
  words: string;
  multiplier: number;
}

function short(v: number): string {
  return Number(v.toPrecision(6)).toString();
}

/** The multiplier of one relation for this subject, or a problem at `path`. */
export function applyRelation(relation: CovariateRelation, covariates: Covariates, path: string): { ok: true; applied: AppliedRelation } | { ok: false; problem: Problem } {
  const fail = (where: string, message: string) => ({ ok: false as const, problem: { path: `${path}${where}`, message } });
  const kinds = (['power', 'linear', 'exponential', 'factors'] as const).filter((k) => relation[k] !== undefined);
  if (kinds.length !== 1) return fail('', 'needs exactly one of `power`, `linear`, `exponential` or `factors`');
  const kind = kinds[0];
  const covariate = covariates[relation.on];
  if (!covariate) return fail('.on', `the subject has no covariate '${relation.on}' (give ${missingFor(relation.on)})`);

  if (kind === 'factors') {
    if (typeof covariate.value !== 'string') return fail('.factors', `'${relation.on}' is a number, not a category; use power, linear or exponential`);
    if (relation.reference !== undefined) return fail('.reference', 'is not used with `factors` (the category not listed has factor 1)');
    const factors = relation.factors as Record<string, number>;
    const bad = Object.entries(factors).find(([, f]) => !(f > 0 && Number.isFinite(f)));
    if (bad) return fail(`.factors.${bad[0]}`, 'must be a positive number');
    const multiplier = factors[covariate.value] ?? 1;
    return { ok: true, applied: { words: `× ${short(multiplier)} (${relation.on} ${covariate.value})`, multiplier } };
  }
  if (typeof covariate.value === 'string') return fail('.on', `'${relation.on}' is a category ('${covariate.value}'); use \`factors\``);
  if (relation.reference === undefined) return fail('.reference', `is required: the value of ${relation.on} at which the quantity equals its typical value`);
  const unitWords = covariate.unit ? `a unit like '${covariate.unit}'` : 'a plain number';
  const ref = covariate.unit ? convertToUnit(relation.reference, covariate.unit, unitWords) : convertToUnit(relation.reference, '1', unitWords);
  if (!ref.ok) return fail('.reference', ref.message);
  const c = covariate.value;
  const r = ref.value;
  const unit = covariate.unit ? ` ${covariate.unit}` : '';
  const coefficient = relation[kind] as number;
  let multiplier: number;
  let words: string;
  if (kind === 'power') {
    if (!(r > 0)) return fail('.reference', 'must be positive for a power relation');
    if (!(c > 0)) return fail('.on', `${relation.on} is ${short(c)}; a power relation needs a positive covariate`);
    multiplier = Math.pow(c / r, coefficient);
    words = `× (${relation.on} / ${short(r)}${unit})^${short(coefficient)}`;
  } else if (kind === 'linear') {
    multiplier = 1 + coefficient * (c - r);
    words = `× (1 + ${short(coefficient)} · (${relation.on} − ${short(r)}${unit}))`;
  } else {
    multiplier = Math.exp(coefficient * (c - r));
    words = `× exp(${short(coefficient)} · (${relation.on} − ${short(r)}${unit}))`;
  }
  if (!(multiplier > 0 && Number.isFinite(multiplier))) {
    return fail('', `gives a multiplier of ${short(multiplier)} for ${relation.on} = ${short(c)}${unit}; the quantity must stay positive and finite`);
  }
  return { ok: true, applied: { words, multiplier } };
}
