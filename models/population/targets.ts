/**
 * Targets in the trade's terms — trough at least X, peak at most U, AUC per 24 h within a range,
 * a share of the dosing interval above a level or within a window — read into numbers, and
 * whether one subject's figures meet them.
 */
import type { Model } from '../building/model.ts';
import type { Problem } from '../scenario/problems.ts';
import type { Period, Population, Target } from '../scenario/schema.ts';
import { readShare } from '../scenario/shares.ts';
import { convertQuantity, convertToUnit } from '../scenario/units.ts';

export type TargetMeasure = 'trough' | 'peak' | 'auc24' | 'above' | 'window';

export interface ReadTarget {
  /** Index in population.targets. */
  index: number;
  compartment: number;
  period: Period;
  measure: TargetMeasure;
  /** Bounds on the figure (trough, peak, auc24) or on the share of the interval (above, window). */
  atLeast: number | null;
  atMost: number | null;
  /** The concentration levels of `above` (from) and `window` (from, to). */
  from: number | null;
  to: number | null;
  /** True when the target only caps the figure (a peak or trough ceiling): kept by the regimen grid. */
  ceiling: boolean;
  /** The target in words, e.g. "trough ≥ 4 mg/L at steady state (central)". */
  words: string;
}

const measures: TargetMeasure[] = ['trough', 'peak', 'auc24', 'above', 'window'];

export function periodWords(p: Period): string {
  return typeof p === 'number' ? `dosing interval ${p}` : p;
}

function short(v: number): string {
  return Number(v.toPrecision(6)).toString();
}

export function readTargets(p: Population, model: Model, problems: Problem[]): ReadTarget[] {
  const out: ReadTarget[] = [];
  const units = model.units;
  const concentrationUnit = `${units.amount}/${units.volume}`;
  const aucUnit = `${units.amount}*${units.time}/${units.volume}`;
  const fail = (path: string, message: string) => problems.push({ path, message });
  p.targets.forEach((t: Target, i) => {
    const path = `population.targets[${i}]`;
    const given = measures.filter((m) => t[m] !== undefined);
    if (given.length !== 1) {
      fail(path, given.length === 0 ? 'needs one of `trough`, `peak`, `auc24`, `above` or `window`' : `give one measure per target, not ${given.join(' and ')}`);
      return;
    }
    const measure = given[0];
    let compartment = model.compartments.findIndex((c) => c.volume !== null);
    if (t.compartment !== undefined) {
      compartment = model.compartments.findIndex((c) => c.id === t.compartment);
      if (compartment < 0) return fail(`${path}.compartment`, `no compartment named '${t.compartment}'`);
      if (model.compartments[compartment].volume === null) return fail(`${path}.compartment`, `'${t.compartment}' has no volume, so it has no concentration`);
    }
    if (compartment < 0) return fail(path, 'the model has no compartment with a volume');
    const share = measure === 'above' || measure === 'window';
    if (share && t.forAtLeast === undefined) return fail(`${path}.forAtLeast`, `is required with \`${measure}\`: the share of the dosing interval, e.g. "40%"`);
    if (!share && t.forAtLeast !== undefined) return fail(`${path}.forAtLeast`, `is used with \`above\` or \`window\`, not \`${measure}\``);
    const concentration = (q: number | string, where: string): number | null => {
      const c = convertQuantity(q, 'concentration', units);
      if (!c.ok) fail(where, c.message);
      else if (!(c.value >= 0)) fail(where, 'must not be negative');
      else return c.value;
      return null;
    };
    let atLeast: number | null = null;
    let atMost: number | null = null;
    let from: number | null = null;
    let to: number | null = null;
    let words: string;
    const cUnit = concentrationUnit;
    if (measure === 'trough' || measure === 'peak' || measure === 'auc24') {
      const bounds = t[measure] as { atLeast?: number | string; atMost?: number | string };
      if (bounds.atLeast === undefined && bounds.atMost === undefined) return fail(`${path}.${measure}`, 'needs `atLeast`, `atMost` or both');
      const read = (q: number | string | undefined, field: string): number | null => {
        if (q === undefined) return null;
        if (measure !== 'auc24') return concentration(q, `${path}.${measure}.${field}`);
        const c = convertToUnit(q, aucUnit, `an AUC unit such as ${aucUnit}`);
        if (!c.ok) fail(`${path}.${measure}.${field}`, c.message);
        else if (!(c.value >= 0)) fail(`${path}.${measure}.${field}`, 'must not be negative');
        else return c.value;
        return null;
      };
      atLeast = read(bounds.atLeast, 'atLeast');
      atMost = read(bounds.atMost, 'atMost');
      if ((bounds.atLeast !== undefined && atLeast === null) || (bounds.atMost !== undefined && atMost === null)) return;
      if (atLeast !== null && atMost !== null && !(atLeast < atMost)) return fail(`${path}.${measure}.atMost`, 'must be greater than atLeast');
      const unit = measure === 'auc24' ? `${units.amount}·${units.time}/${units.volume}` : cUnit;
      const name = measure === 'auc24' ? 'AUC per 24 h' : measure;
      words = [atLeast !== null ? `${name} ≥ ${short(atLeast)} ${unit}` : null, atMost !== null ? `${atLeast !== null ? '' : `${name} `}≤ ${short(atMost)} ${unit}` : null]
        .filter(Boolean)
        .join(' and ');
    } else {
      const shareValue = readShare(t.forAtLeast as number | string, `${path}.forAtLeast`, { fail }, 'a share of the dosing interval');
      if (shareValue === null) return;
      atLeast = shareValue;
      if (measure === 'above') {
        from = concentration(t.above as number | string, `${path}.above`);
        if (from === null) return;
        words = `above ${short(from)} ${cUnit} for ≥ ${short(shareValue * 100)}% of the interval`;
      } else {
        const w = t.window as { from: number | string; to: number | string };
        from = concentration(w.from, `${path}.window.from`);
        to = concentration(w.to, `${path}.window.to`);
        if (from === null || to === null) return;
        if (!(from < to)) return fail(`${path}.window.to`, 'must be greater than from');
        words = `within ${short(from)}–${short(to)} ${cUnit} for ≥ ${short(shareValue * 100)}% of the interval`;
      }
    }
    const where = `${periodWords(t.when)}${model.compartments.filter((c) => c.volume !== null).length > 1 ? ` (${model.compartments[compartment].id})` : ''}`;
    out.push({
      index: i,
      compartment,
      period: t.when,
      measure,
      atLeast,
      atMost,
      from,
      to,
      ceiling: (measure === 'peak' || measure === 'trough' || measure === 'auc24') && atLeast === null,
      words: t.label ?? `${words} at ${where}`,
    });
  });
  return out;
}

/** Whether a value meets a target's bounds; a value not determined (NaN) meets none. */
export function meets(value: number, atLeast: number | null, atMost: number | null): boolean {
  if (Number.isNaN(value)) return false;
  return (atLeast === null || value >= atLeast) && (atMost === null || value <= atMost);
}

