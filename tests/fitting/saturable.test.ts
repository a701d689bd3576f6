/**
 * A saturable elimination (Michaelis–Menten, Vmax and Km) fitted to rich noise-free levels made
 * by the engine at rtol 1e-12: the fit's adaptive path runs at rtol 1e-10, so the levels and
 * the predictions differ by ~1e-10 relative, and Vmax and Km come back to far better than 1e-3.
 */
import { describe, expect, it } from 'vitest';
import { fitScenario } from '../../models/fitting/fit.ts';
import type { ScenarioInput } from '../../models/scenario/schema.ts';
import { engineLevels } from './synthetic.ts';

function saturable(vmax: unknown, km: unknown, levels: { time: number; concentration: number }[], fit?: unknown): ScenarioInput {
  return {
    title: 'Invented drug with saturable elimination',
    units: { amount: 'mg', volume: 'L', time: 'h' },
    compartments: [{ id: 'gut' }, { id: 'central', volume: '50 L' }],
    transfers: [
      { from: 'gut', to: 'central', k: '1 1/h' },
      { from: 'central', vmax: vmax as string, km: km as string },
    ],
    doses: [{ into: 'gut', amount: '300 mg', at: 0, every: '12 h', through: '96 h' }],
    output: { end: '120 h', step: '1 h' },
    solver: { method: 'auto', rtol: 1e-12, atol: 1e-14, maxSteps: 5_000_000 },
    observations: levels.map((l) => ({ time: l.time, compartment: 'central', concentration: l.concentration })),
    ...(fit ? { fit } : {}),
  } as ScenarioInput;
}

describe('saturable model', () => {
  it('recovers Vmax and Km from 16 levels to 1e-3', () => {
    const times = [1, 2, 4, 8, 11.9, 24.5, 36, 48, 60, 72, 84, 96.5, 100, 104, 110, 118];
    const levels = engineLevels(saturable('40 mg/h', '4 mg/L', []), times);
    const r = fitScenario(saturable({ typical: '25 mg/h', name: 'Vmax', cv: '30%' }, { typical: '8 mg/L', name: 'Km', cv: '50%' }, levels, { estimate: ['Vmax', 'Km'], objective: 'wls' }), { band: false });
    if (!r.ok) throw new Error(JSON.stringify(r.problems));
    expect(r.value.converged).toBe(true);
    expect(Math.abs(r.value.estimates.Vmax.value / 40 - 1)).toBeLessThan(1e-3);
    expect(Math.abs(r.value.estimates.Km.value / 4 - 1)).toBeLessThan(1e-3);
  });
});
