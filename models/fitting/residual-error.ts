/**
 * The residual error of a measured level: additive (SD a), proportional (SD b·prediction) or
 * combined, variance a² + (b·f)² — the population's `residual` read into the scenario's
 * concentration unit, as the population applies it to simulated observations.
 */
import type { Problem } from '../scenario/problems.ts';
import type { Population } from '../scenario/schema.ts';
import { readShare } from '../scenario/shares.ts';
import { convertQuantity, type UnitSystem } from '../scenario/units.ts';

export interface ResidualError {
  additive: number;
  proportional: number;
}

export function readResidualError(r: NonNullable<Population['residual']>, units: UnitSystem, problems: Problem[]): ResidualError {
  const fail = (path: string, message: string) => problems.push({ path, message });
  let additive = 0;
  if (r.additive !== undefined) {
    const c = convertQuantity(r.additive, 'concentration', units);
    if (!c.ok) fail('population.residual.additive', c.message);
    else if (!(c.value >= 0)) fail('population.residual.additive', 'must not be negative');
    else additive = c.value;
  }
  const proportional = r.proportional === undefined ? 0 : (readShare(r.proportional, 'population.residual.proportional', { fail }, 'a proportional error', 5) ?? 0);
  if (additive === 0 && proportional === 0) fail('population.residual', 'gives no error (additive and proportional both 0 or missing); a fit cannot weigh levels by it');
  return { additive, proportional };
}

/** SD of a level whose prediction is f; never below a tiny floor, so a zero prediction does not divide by zero. */
export function residualSd(e: ResidualError, f: number): number {
  const sd = Math.sqrt(e.additive * e.additive + e.proportional * e.proportional * f * f);
  return Math.max(sd, 1e-12 * (1 + Math.abs(f)));
}
