/**
 * The `propose` block read into numbers, every problem at its path: the dose line kept, the
 * amounts (sums of the strengths, or as listed), the intervals and durations, the targets
 * (read as population.targets are, at propose.targets[i]).
 */
import type { DoseLineSummary, Model } from '../building/model.ts';
import { readTargets, type ReadTarget } from '../population/targets.ts';
import type { Outcome, Problem } from '../scenario/problems.ts';
import { populationSchema, type Quantity, type Scenario } from '../scenario/schema.ts';
import { convertQuantity, type Dimension } from '../scenario/units.ts';
import { amountsFromStrengths, isAvailable, type Rounding } from './strengths.ts';

export interface ProposeSettings {
  /** The dose line whose route, bioavailability and lag the proposals keep. */
  line: DoseLineSummary;
  /** Maintenance amounts tried, ascending (model amount unit). */
  amounts: number[];
  /** What a loading dose is rounded onto: the strengths' sums, or the listed amounts' sums. */
  loadingAmounts: number[];
  intervals: number[];
  /** Infusion durations (0: a bolus or an oral dose). */
  durations: number[];
  loading: boolean;
  rounding: Rounding;
  targets: ReadTarget[];
  maxUnits: number;
}

/** Regimens one search may try: each costs a steady-state search on a saturable model. */
export const MAX_REGIMENS = 600;

/** Distinct amounts the strengths may make before the search refuses them. */
const MAX_AMOUNTS = 200;

function readPositive(list: readonly Quantity[], dimension: Dimension, path: string, model: Model, problems: Problem[], zeroAllowed = false): number[] {
  const out: number[] = [];
  list.forEach((q, i) => {
    const c = convertQuantity(q, dimension, model.units);
    if (!c.ok) problems.push({ path: `${path}[${i}]`, message: c.message });
    else if (!(c.value > 0 || (zeroAllowed && c.value === 0))) problems.push({ path: `${path}[${i}]`, message: zeroAllowed ? 'must not be negative' : 'must be greater than zero' });
    else out.push(c.value);
  });
  return out;
}

export function readPropose(s: Scenario, model: Model): Outcome<ProposeSettings> {
  const p = s.propose;
  if (!p) return { ok: false, problems: [{ path: 'propose', message: 'the scenario has no `propose` block: give the strengths or amounts, the intervals and the targets' }] };
  const problems: Problem[] = [];
  const line = model.doseLines.find((l) => l.line === p.line);
  if (!line) problems.push({ path: 'propose.line', message: `there is no doses[${p.line}] (the scenario has ${s.doses.length} dose line${s.doses.length === 1 ? '' : 's'})` });
  if (p.targets.length === 0) problems.push({ path: 'propose.targets', message: 'needs at least one target (trough, peak, auc24, above or window): proposals are ranked by the targets they meet' });
  if (!p.strengths && !p.amounts) problems.push({ path: 'propose', message: 'needs `strengths` (amounts are their sums) or `amounts` (tried as given)' });

  const strengths = p.strengths ? readPositive(p.strengths, 'amount', 'propose.strengths', model, problems) : null;
  const listed = p.amounts ? readPositive(p.amounts, 'amount', 'propose.amounts', model, problems) : null;
  const intervals = readPositive(p.intervals, 'time', 'propose.intervals', model, problems);
  const durations = p.durations ? readPositive(p.durations, 'time', 'propose.durations', model, problems, true) : line ? [line.duration] : [];
  if (problems.length > 0 || !line) return { ok: false, problems };

  let amounts: number[];
  let loadingAmounts: number[];
  const sums = (of: number[], path: string): number[] | null => {
    const made = amountsFromStrengths(of, p.maxUnits, MAX_AMOUNTS);
    if (made === null) problems.push({ path, message: `sums of up to ${p.maxUnits} units make more than ${MAX_AMOUNTS} amounts: list fewer, or lower propose.maxUnits` });
    return made;
  };
  if (strengths) {
    const made = sums(strengths, 'propose.strengths');
    if (!made) return { ok: false, problems };
    loadingAmounts = made;
    if (listed) {
      // Listed amounts with strengths: each must be made of them.
      listed.forEach((a, i) => {
        if (!isAvailable(a, made)) problems.push({ path: `propose.amounts[${i}]`, message: `${a} ${model.units.amount} is not a sum of up to ${p.maxUnits} of the strengths (${strengths.join(', ')} ${model.units.amount})` });
      });
      amounts = [...new Set(listed)].sort((a, b) => a - b);
    } else amounts = made;
  } else {
    amounts = [...new Set(listed as number[])].sort((a, b) => a - b);
    const made = sums(amounts, 'propose.amounts');
    if (!made) return { ok: false, problems };
    loadingAmounts = made;
  }
  const regimens = amounts.length * intervals.length * durations.length;
  if (regimens > MAX_REGIMENS) {
    problems.push({ path: 'propose', message: `${amounts.length} amounts × ${intervals.length} intervals × ${durations.length} durations make ${regimens} regimens, more than ${MAX_REGIMENS}: list fewer, or lower propose.maxUnits` });
  }

  // The targets are read exactly as a population's (one format); only their paths differ.
  const targetProblems: Problem[] = [];
  const targets = readTargets(populationSchema.parse({ subjects: 1, targets: p.targets }), model, targetProblems);
  for (const t of targetProblems) problems.push({ ...t, path: t.path.replace(/^population\.targets/, 'propose.targets') });
  targets.forEach((t) => {
    if (t.period !== 'steady state') {
      problems.push({ path: `propose.targets[${t.index}].when`, message: 'proposals are judged at "steady state" (the first interval is judged for the time to the window and the loading dose); leave `when` out' });
    }
  });
  if (problems.length > 0) return { ok: false, problems };
  return { ok: true, value: { line, amounts, loadingAmounts, intervals, durations, loading: p.loading, rounding: p.rounding, targets, maxUnits: p.maxUnits } };
}
