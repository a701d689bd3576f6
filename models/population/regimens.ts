/**
 * A grid of regimens (amounts × intervals × infusion durations of one dose line), each a copy of
 * the scenario with that line changed. Every regimen is given to the same virtual subjects
 * (common random numbers), so differences between regimens are not sampling noise.
 */
import type { Problem } from '../scenario/problems.ts';
import type { Population, Quantity, Scenario } from '../scenario/schema.ts';

export interface RegimenVariant {
  amount: Quantity | null;
  interval: Quantity | null;
  duration: Quantity | null;
  /** E.g. "500 mg every 12 h over 30 min". */
  words: string;
  scenario: Scenario;
}

/** A quantity as written in the scenario ("500 mg"), a bare number as itself. */
export function writtenQuantity(q: Quantity): string {
  return typeof q === 'number' ? String(q) : q.trim();
}

export function readRegimens(s: Scenario, p: Population, targetCount: number, problems: Problem[]): RegimenVariant[] {
  const grid = p.regimens;
  if (!grid) return [];
  const path = 'population.regimens';
  if (targetCount === 0) {
    problems.push({ path, message: 'needs population.targets: regimens are compared by how many subjects attain them' });
    return [];
  }
  const line = s.doses[grid.line];
  if (!line) {
    problems.push({ path: `${path}.line`, message: `there is no doses[${grid.line}] (the scenario has ${s.doses.length} dose line${s.doses.length === 1 ? '' : 's'})` });
    return [];
  }
  if (!grid.amounts && !grid.intervals && !grid.durations) {
    problems.push({ path, message: 'needs `amounts`, `intervals`, `durations` or several of them' });
    return [];
  }
  const amounts: (Quantity | null)[] = grid.amounts ?? [null];
  const intervals: (Quantity | null)[] = grid.intervals ?? [null];
  const durations: (Quantity | null)[] = grid.durations ?? [null];
  const out: RegimenVariant[] = [];
  for (const amount of amounts) {
    for (const interval of intervals) {
      for (const duration of durations) {
        const dose = { ...line };
        if (amount !== null) dose.amount = amount;
        if (interval !== null) dose.every = interval;
        if (duration !== null) {
          dose.duration = duration;
          delete dose.rate;
        }
        const doses = s.doses.map((d, i) => (i === grid.line ? dose : d));
        const words = [
          writtenQuantity(dose.amount),
          dose.every !== undefined ? `every ${writtenQuantity(dose.every)}` : 'once',
          dose.duration !== undefined ? `over ${writtenQuantity(dose.duration)}` : null,
        ]
          .filter(Boolean)
          .join(' ');
        out.push({ amount, interval, duration, words, scenario: { ...s, doses } });
      }
    }
  }
  return out;
}
