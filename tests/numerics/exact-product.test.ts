/**
 * The exact path multiplies by each propagator's nonzero entries, as straight-line code
 * for the model's sparsity pattern where code generation is allowed, else in a loop. Both
 * must give the same bits: the generated code adds the same products in the same order.
 */
import { afterEach, describe, expect, it } from 'vitest';
import { setCodeGeneration } from '../../models/solving/numerics/generated-code.ts';
import { simulate, type SimulationResult } from '../../models/simulate.ts';

afterEach(() => setCodeGeneration(true));

// Fictional "pellidane": loading infusion, then oral doses with lag into a gut depot; three
// compartments with a cycle (central ↔ tissue ↔ deep) so Φ has zero and nonzero blocks.
const scenario = {
  title: 'Pellidane loading infusion then oral maintenance',
  compartments: [{ id: 'gut' }, { id: 'central', volume: 18 }, { id: 'tissue', volume: 40 }, { id: 'deep', volume: 120 }],
  transfers: [
    { from: 'gut', to: 'central', k: 1.4 },
    { from: 'central', to: 'tissue', cl: 7 },
    { from: 'tissue', to: 'central', cl: 7 },
    { from: 'tissue', to: 'deep', k: 0.05 },
    { from: 'deep', to: 'tissue', k: 0.01 },
    { from: 'central', cl: 3 },
  ],
  doses: [
    { into: 'central', amount: 500, at: 0, duration: 1.5 },
    { into: 'gut', amount: 250, at: 8, every: 8, count: 20, bioavailability: 0.6, lag: 0.75 },
  ],
  output: { end: 200, step: 0.25 },
  solver: { method: 'exact' },
};

function run(generated: boolean): SimulationResult {
  setCodeGeneration(generated);
  const result = simulate(scenario);
  if (!result.ok) throw new Error(JSON.stringify(result.problems));
  return result.value;
}

describe('exact path: generated propagator products', () => {
  it('give the same amounts, bit for bit, and the same figures as the loop', () => {
    const generated = run(true);
    const looped = run(false);
    expect(generated.diagnostics.path).toBe('exact');
    generated.compartments.forEach((series, c) => expect(Array.from(series.amount)).toEqual(Array.from(looped.compartments[c].amount)));
    expect(generated.metrics).toEqual(looped.metrics);
    // And the run is not trivially empty: the deep compartment fills over the span.
    const deep = generated.compartments[3].amount;
    expect(deep[deep.length - 1]).toBeGreaterThan(1);
  });
});
