/**
 * The model quantities a fit may estimate: every volume, rate constant, clearance, Vmax, Km,
 * bioavailability and lag of the scenario, each with its JSON path, its name (when its
 * quantity object has one) and the dimension its value is read in.
 */
import type { Dimension } from '../scenario/units.ts';
import type { AdjustedQuantity, ModelQuantity, Scenario } from '../scenario/schema.ts';

/** How a quantity is kept inside its range while fitted: log for positive ones, logit for fractions. */
export type Scale = 'log' | 'logit';

export interface QuantitySlot {
  /** JSON path, e.g. "transfers[1].cl". */
  path: string;
  name: string | null;
  /** The dimension of its value; null for a fraction (bioavailability). */
  dimension: Dimension | null;
  scale: Scale;
  /** As written in the scenario. */
  written: ModelQuantity;
}

/** Every quantity the scenario writes, in scenario order (the order varyingQuantities uses). */
export function quantitySlots(s: Scenario): QuantitySlot[] {
  const out: QuantitySlot[] = [];
  const visit = (q: ModelQuantity | undefined, path: string, dimension: Dimension | null) => {
    if (q === undefined) return;
    const name = typeof q === 'object' ? (q.name ?? null) : null;
    out.push({ path, name, dimension, scale: dimension === null ? 'logit' : 'log', written: q });
  };
  s.compartments.forEach((c, i) => visit(c.volume, `compartments[${i}].volume`, 'volume'));
  s.transfers.forEach((t, i) => {
    visit(t.k, `transfers[${i}].k`, 'rateConstant');
    visit(t.cl, `transfers[${i}].cl`, 'clearance');
    visit(t.vmax, `transfers[${i}].vmax`, 'amountRate');
    visit(t.km, `transfers[${i}].km`, 'concentration');
  });
  s.doses.forEach((d, i) => {
    visit(d.bioavailability, `doses[${i}].bioavailability`, null);
    visit(d.lag, `doses[${i}].lag`, 'time');
  });
  return out;
}

export function isAdjusted(q: ModelQuantity): q is AdjustedQuantity {
  return typeof q === 'object' && q !== null;
}

/** The written typical value: the quantity itself, or its object's `typical`. */
export function writtenTypical(q: ModelQuantity): number | string {
  return isAdjusted(q) ? q.typical : q;
}

/** A path "compartments[1].volume" split into its list, index and field. */
export function splitPath(path: string): { list: 'compartments' | 'transfers' | 'doses'; index: number; field: string } {
  const m = /^(compartments|transfers|doses)\[(\d+)\]\.(\w+)$/.exec(path);
  if (!m) throw new Error(`not a quantity path: ${path}`);
  return { list: m[1] as 'compartments' | 'transfers' | 'doses', index: Number(m[2]), field: m[3] };
}

/**
 * A copy of the scenario with the quantities at `paths` replaced (only the containers on each
 * path are copied, the rest is shared, so a copy per evaluation costs little).
 */
export function withQuantities(s: Scenario, paths: readonly string[], values: readonly ModelQuantity[]): Scenario {
  const copy: Scenario = { ...s, compartments: [...s.compartments], transfers: [...s.transfers], doses: [...s.doses] };
  paths.forEach((path, k) => {
    const { list, index, field } = splitPath(path);
    const container = copy[list] as unknown as Record<string, unknown>[];
    container[index] = { ...container[index], [field]: values[k] };
  });
  return copy;
}
