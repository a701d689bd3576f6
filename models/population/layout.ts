/**
 * Where each exposure figure of a subject sits in its row of numbers: per period (steady state,
 * a dosing interval), per compartment with a volume, the figures of `FIGURES` and then the share
 * of the interval within each window of that compartment.
 */
import type { ModelThreshold } from '../building/model.ts';
import type { Period } from '../scenario/schema.ts';

export const FIGURES = ['cmax', 'tmax', 'cmin', 'trough', 'auc', 'cavg', 'auc24'] as const;
export type FigureName = (typeof FIGURES)[number];

export interface FigureLayout {
  periods: Period[];
  /** Compartments with a volume, by index. */
  banded: number[];
  /** Windows the figures measure: the scenario's thresholds, then the targets' levels. */
  thresholds: ModelThreshold[];
  /** For each banded compartment, the indices into `thresholds` of its windows. */
  windows: number[][];
  /** Numbers per subject. */
  columns: number;
  /** First column of (period, banded compartment). */
  base: Int32Array;
}

export function figureLayout(periods: Period[], banded: number[], thresholds: ModelThreshold[]): FigureLayout {
  const windows = banded.map((c) => thresholds.flatMap((t, k) => (t.compartment === c ? [k] : [])));
  const base = new Int32Array(periods.length * banded.length);
  let columns = 0;
  for (let p = 0; p < periods.length; p++) {
    for (let b = 0; b < banded.length; b++) {
      base[p * banded.length + b] = columns;
      columns += FIGURES.length + windows[b].length;
    }
  }
  return { periods, banded, thresholds, windows, columns, base };
}

export function figureColumn(layout: FigureLayout, period: number, banded: number, figure: FigureName): number {
  return layout.base[period * layout.banded.length + banded] + FIGURES.indexOf(figure);
}

/** Column of the share of the interval in window `threshold` (an index into layout.thresholds). */
export function windowColumn(layout: FigureLayout, period: number, banded: number, threshold: number): number {
  return layout.base[period * layout.banded.length + banded] + FIGURES.length + layout.windows[banded].indexOf(threshold);
}

/** Periods are equal when written alike ("steady state", or the same interval number). */
export function periodIndex(periods: readonly Period[], p: Period): number {
  return periods.findIndex((q) => q === p);
}
