/**
 * The model quantities that vary between subjects (those with a `cv`), in a fixed order: each
 * takes one standard normal number per subject, at its place in that order.
 */
import type { AdjustedQuantity, ModelQuantity, Scenario } from '../scenario/schema.ts';

export interface VaryingQuantity {
  /** JSON path of the quantity, e.g. "transfers[1].cl"; the normaliser asks for effects by it. */
  path: string;
  /** The quantity's own name (for correlations and tables), or null. */
  name: string | null;
}

function varies(q: ModelQuantity | undefined): q is AdjustedQuantity {
  return typeof q === 'object' && q !== null && q.cv !== undefined;
}

/** Every varying quantity of the scenario, in the order the scenario lists them. */
export function varyingQuantities(s: Scenario): VaryingQuantity[] {
  const out: VaryingQuantity[] = [];
  const visit = (q: ModelQuantity | undefined, path: string) => {
    if (varies(q)) out.push({ path, name: q.name ?? null });
  };
  s.compartments.forEach((c, i) => visit(c.volume, `compartments[${i}].volume`));
  s.transfers.forEach((t, i) => {
    visit(t.k, `transfers[${i}].k`);
    visit(t.cl, `transfers[${i}].cl`);
    visit(t.vmax, `transfers[${i}].vmax`);
    visit(t.km, `transfers[${i}].km`);
  });
  s.doses.forEach((d, i) => {
    visit(d.bioavailability, `doses[${i}].bioavailability`);
    visit(d.lag, `doses[${i}].lag`);
  });
  return out;
}

/** How a varying quantity is called in messages and tables: its name, else its path. */
export function quantityLabel(q: VaryingQuantity): string {
  return q.name ?? q.path;
}
