/**
 * Targets judged on one set of figures (a steady-state cycle or one interval from empty): the
 * figure each target bounds, and whether it meets them. Shares come from windows the run measured:
 * the targets' levels as thresholds, one set per "slot" (an amount, when a linear model's unit-dose
 * run stands for every amount at once, its levels divided by the amount).
 */
import type { ModelThreshold } from '../building/model.ts';
import type { WindowFigures } from '../figures/exposure.ts';
import { meets, type ReadTarget } from '../population/targets.ts';

/** The figures of one compartment over one interval, as the targets read them. */
export interface ExposureRead {
  trough: number;
  peak: number;
  auc: number;
  windows: readonly WindowFigures[];
}

/** Threshold index of target k in slot j. */
export function thresholdIndex(targets: number, slot: number, k: number): number {
  return slot * targets + k;
}

/** The targets' levels as thresholds for each slot, divided by its scale (1 for a run at the real amount). */
export function targetThresholds(targets: readonly ReadTarget[], scales: readonly number[]): ModelThreshold[] {
  const out: ModelThreshold[] = [];
  scales.forEach((s, j) => {
    targets.forEach((t, k) => {
      if (t.measure !== 'above' && t.measure !== 'window') return;
      out.push({ compartment: t.compartment, above: (t.from as number) / s, below: t.measure === 'window' ? (t.to as number) / s : null, index: thresholdIndex(targets.length, j, k) });
    });
  });
  return out;
}

/**
 * Each target's figure: trough, peak and AUC per 24 h (AUCτ × 24 h/τ) times `scale`, the share of
 * the interval above or in the window from the slot's thresholds. NaN where the run gave nothing.
 */
export function targetValues(targets: readonly ReadTarget[], read: (compartment: number) => ExposureRead | null, scale: number, slot: number, interval: number, day: number): number[] {
  return targets.map((t, k) => {
    const f = read(t.compartment);
    if (!f) return NaN;
    if (t.measure === 'trough') return f.trough * scale;
    if (t.measure === 'peak') return f.peak * scale;
    if (t.measure === 'auc24') return (f.auc * scale * day) / interval;
    const w = f.windows.find((x) => x.threshold === thresholdIndex(targets.length, slot, k));
    return w ? w.fractionInWindow : NaN;
  });
}

export function targetsMet(targets: readonly ReadTarget[], values: readonly number[]): boolean[] {
  return targets.map((t, k) => meets(values[k], t.atLeast, t.atMost));
}
