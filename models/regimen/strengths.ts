/**
 * Amounts that can be given from the strengths on hand (tablets, vials): every distinct sum of
 * one to `maxUnits` units, and the rounding of a computed amount onto them.
 */

/** Two amounts closer than this (relative) are the same amount: unit conversion leaves rounding. */
const SAME = 1e-9;

function same(a: number, b: number): boolean {
  return Math.abs(a - b) <= SAME * Math.max(Math.abs(a), Math.abs(b));
}

/** Sorted ascending, duplicates (within SAME) dropped. */
function distinct(values: number[]): number[] {
  const sorted = [...values].sort((a, b) => a - b);
  const out: number[] = [];
  for (const v of sorted) if (out.length === 0 || !same(out[out.length - 1], v)) out.push(v);
  return out;
}

/**
 * Every sum of 1…maxUnits strengths (any strength used any number of times), ascending, or null
 * when the sums would exceed `ceiling` distinct amounts. Built level by level — the sums of k
 * units are those of k − 1 units plus one strength — deduplicated at each level, so commensurate
 * strengths (250 and 500 mg) stay small: 20 units of them make 40 amounts.
 */
export function amountsFromStrengths(strengths: readonly number[], maxUnits: number, ceiling = 5000): number[] | null {
  let level = distinct([...strengths]);
  let all = level;
  for (let k = 2; k <= maxUnits; k++) {
    const next: number[] = [];
    for (const s of level) for (const t of strengths) next.push(s + t);
    level = distinct(next);
    all = distinct([...all, ...level]);
    if (all.length > ceiling) return null;
  }
  return all;
}

/** Whether `amount` is one of the sums (within the rounding of unit conversion). */
export function isAvailable(amount: number, available: readonly number[]): boolean {
  return available.some((a) => same(a, amount));
}

export type Rounding = 'nearest' | 'up' | 'down';

/**
 * A computed amount rounded onto the available ones (ascending): the nearest, the smallest at or
 * above it, or the largest at or below it; clamped to the ends when it falls outside them.
 */
export function roundToAvailable(x: number, available: readonly number[], rule: Rounding): number {
  const first = available[0];
  const last = available[available.length - 1];
  if (x <= first) return first;
  if (x >= last) return last;
  let hi = available.findIndex((a) => a >= x);
  if (same(available[hi], x)) return available[hi];
  const lo = hi - 1;
  if (rule === 'up') return available[hi];
  if (rule === 'down') return available[lo];
  // Nearest in absolute terms; a tie goes up (the smaller risk of a first trough below the window).
  hi = x - available[lo] < available[hi] - x ? lo : hi;
  return available[hi];
}

/**
 * How far rounding onto the sums may move x: the gap between the two sums around it, or beyond
 * the ends the gap next to the end (the end itself when there is one sum, the step from nothing).
 * A rounded amount further than this from x was clamped, not rounded.
 */
export function roundingGap(x: number, available: readonly number[]): number {
  const n = available.length;
  if (n === 1) return available[0];
  if (x <= available[0]) return available[1] - available[0];
  if (x >= available[n - 1]) return available[n - 1] - available[n - 2];
  const hi = available.findIndex((a) => a >= x);
  return available[hi] - available[hi - 1];
}
