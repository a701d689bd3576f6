/**
 * The loading dose: one first dose, in place of the first maintenance dose, that brings the first
 * trough to the steady-state trough of the maintenance regimen, so the first interval starts
 * where the regimen ends up.
 * - Linear model: the closed form, loading = maintenance × accumulation ratio R (Gibaldi & Perrier,
 *   Pharmacokinetics, from memory; R = 1/(1 − e^{−kτ}) for one compartment), R taken as the
 *   steady-state trough over the first trough from empty — that ratio for one compartment, with
 *   bolus doses or infusions, and for any linear model the amount whose first trough is the
 *   steady-state trough, since the first trough is proportional to the first dose; verified by simulation.
 * - Saturable model: no such ratio holds, so the first trough is bisected on simulation: it
 *   rises with the dose (compartment systems are cooperative), so the root is bracketed by
 *   doubling and halved down to LOADING_RTOL.
 * The amount is then rounded onto the strengths' sums by propose.rounding.
 */

import { meets, type ReadTarget } from '../population/targets.ts';
import { formatNumber } from '../result/format-number.ts';

/** Relative width to which a saturable model's loading dose is bisected: well below any strength step. */
export const LOADING_RTOL = 1e-4;

/** Gibaldi & Perrier's loading dose (from memory): the maintenance dose times the accumulation ratio. */
export function closedFormLoading(maintenance: number, accumulationRatio: number): number {
  return maintenance * accumulationRatio;
}

/**
 * The amount L with firstTrough(L) = target, firstTrough increasing from firstTrough(0) = 0:
 * bracketed from `guess` by doubling (at most 40 times), then bisected to LOADING_RTOL.
 * Returns null when no bracket is found.
 */
export function bisectLoading(firstTrough: (amount: number) => number, target: number, guess: number): { amount: number; evaluations: number } | null {
  let evaluations = 0;
  const f = (x: number) => {
    evaluations++;
    return firstTrough(x);
  };
  let lo = 0;
  let hi = guess;
  for (let i = 0; f(hi) < target; i++) {
    if (i >= 40) return null;
    lo = hi;
    hi *= 2;
  }
  while (hi - lo > LOADING_RTOL * hi) {
    const mid = 0.5 * (lo + hi);
    if (f(mid) < target) lo = mid;
    else hi = mid;
  }
  return { amount: 0.5 * (lo + hi), evaluations };
}

/** The units a first-interval figure is written in. */
export interface FigureUnits {
  concentration: string;
  /** AUC per 24 h, e.g. "mg/L·h". */
  auc: string;
}

/**
 * A figure beside its bound, with the fewest significant figures (three to six) at which the two
 * still read as different: "25.04 mg/L is above the 25 mg/L ceiling", never "25.0 … above 25".
 */
export function figureBeside(value: number, bound: number): string {
  for (let digits = 3; digits < 6; digits++) {
    const shown = Number(value.toPrecision(digits));
    if (shown !== bound && shown > bound === value > bound) return formatNumber(shown);
  }
  return formatNumber(value);
}

/** What target `t` bounds, in words: "peak", "AUC per 24 h", "share of the interval above 8 mg/L". */
function figureName(t: ReadTarget, u: FigureUnits): string {
  if (t.measure === 'trough' || t.measure === 'peak') return t.measure;
  if (t.measure === 'auc24') return 'AUC per 24 h';
  if (t.measure === 'above') return `share of the interval above ${formatNumber(t.from as number)} ${u.concentration}`;
  return `share of the interval within ${formatNumber(t.from as number)}–${formatNumber(t.to as number)} ${u.concentration}`;
}

/** How target `t`'s figure missed its bounds: "30.46 mg/L is above the 25 mg/L ceiling"; null when it met them. */
export function missWords(t: ReadTarget, value: number, u: FigureUnits): string | null {
  if (meets(value, t.atLeast, t.atMost)) return null;
  if (Number.isNaN(value)) return 'was not determined';
  const share = t.measure === 'above' || t.measure === 'window';
  const unit = share ? '%' : t.measure === 'auc24' ? ` ${u.auc}` : ` ${u.concentration}`;
  const scale = share ? 100 : 1;
  const show = (bound: number) => `${figureBeside(value * scale, bound * scale)}${unit}`;
  if (t.atMost !== null && value > t.atMost) {
    const what = t.atLeast === null ? 'ceiling' : 'upper bound';
    return `${show(t.atMost)} is above the ${formatNumber(t.atMost * scale)}${unit} ${what}`;
  }
  const bound = t.atLeast as number;
  return share ? `${show(bound)} is below the ${formatNumber(bound * scale)}% required` : `${show(bound)} is below the ${formatNumber(bound)}${unit} ${t.atMost === null ? 'floor' : 'lower bound'}`;
}

/**
 * The row's note when a loading dose's first interval misses a target, in the targets' order — a
 * ceiling most of all, which a loading dose aimed at the steady-state trough can break in its own
 * first interval (its peak comes on top of an already full body):
 * "the loading dose's first-interval peak 30.46 mg/L is above the 25 mg/L ceiling (target 2)".
 * `first` holds each target's figure in the first interval after the loading dose. Null when every target is met.
 */
export function firstIntervalNote(targets: readonly ReadTarget[], first: readonly number[], u: FigureUnits): string | null {
  const misses = targets.flatMap((t, k) => {
    const words = missWords(t, first[k] ?? NaN, u);
    return words === null ? [] : [`${figureName(t, u)} ${words} (target ${k + 1})`];
  });
  if (misses.length === 0) return null;
  return `the loading dose's ${misses.map((m) => `first-interval ${m}`).join('; its ')}`;
}
