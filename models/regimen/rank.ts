/**
 * The order of the proposals. The rule, in words (RANKING_RULE), is part of the output:
 * 1. every target met before any miss; among misses, more targets met first;
 * 2. the steady-state trough closer to the middle of the trough window in log terms,
 *    |ln(trough / √(low·high))| — or to its one edge when only one is given;
 * 3. fewer doses per day (a longer interval);
 * 4. a smaller daily amount;
 * 5. a shorter infusion, then a smaller dose (only so that the order is total).
 */
import type { ReadTarget } from '../population/targets.ts';

export const RANKING_RULE =
  'all targets met first (then, among the rest, more targets met); then the steady-state trough closest to the middle of the trough window in log terms, ' +
  '|ln(trough / √(low × high))| (to its one edge when only one is given; the window from the first trough target, else the first window target, else the first above target); ' +
  'then fewer doses per day; then a smaller daily amount; then a shorter infusion and a smaller dose';

export interface TroughWindow {
  /** Index of the target that gives it (its compartment is where the trough is read). */
  target: number;
  low: number | null;
  high: number | null;
}

/** The window the trough is ranked against, or null when no target bounds a level. */
export function troughWindow(targets: readonly ReadTarget[]): TroughWindow | null {
  const trough = targets.find((t) => t.measure === 'trough');
  if (trough) return { target: trough.index, low: trough.atLeast, high: trough.atMost };
  const window = targets.find((t) => t.measure === 'window') ?? targets.find((t) => t.measure === 'above');
  return window ? { target: window.index, low: window.from, high: window.to } : null;
}

/** |ln(trough / middle)|: middle the geometric mean of the edges, or the one edge given. */
export function logDistance(trough: number, w: TroughWindow): number {
  const middle = w.low !== null && w.high !== null ? Math.sqrt(w.low * w.high) : (w.low ?? w.high);
  if (middle === null || !(middle > 0) || !(trough > 0)) return Infinity;
  return Math.abs(Math.log(trough / middle));
}

export interface Rankable {
  amount: number;
  interval: number;
  duration: number;
  allMet: boolean;
  targetsMet: readonly boolean[];
  /** logDistance of the steady-state trough; Infinity when there is none. */
  distance: number;
}

/** Compares two proposals by RANKING_RULE (negative: a first). */
export function compareProposals(a: Rankable, b: Rankable, day: number): number {
  if (a.allMet !== b.allMet) return a.allMet ? -1 : 1;
  const met = (p: Rankable) => p.targetsMet.filter(Boolean).length;
  if (!a.allMet && met(a) !== met(b)) return met(b) - met(a);
  if (a.distance !== b.distance) return a.distance < b.distance || Number.isNaN(b.distance) ? -1 : 1;
  const perDay = (p: Rankable) => day / p.interval;
  if (perDay(a) !== perDay(b)) return perDay(a) - perDay(b);
  const daily = (p: Rankable) => p.amount * perDay(p);
  if (daily(a) !== daily(b)) return daily(a) - daily(b);
  if (a.duration !== b.duration) return a.duration - b.duration;
  return a.amount - b.amount;
}
