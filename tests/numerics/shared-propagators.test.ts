/**
 * A steady-state cycle sharing the propagators of the run just made (a virtual subject's run,
 * then its steady state): shared only for the same matrix and equal inputs key by key, and the
 * steady-state figures the same as with propagators of its own — to 1e-13 relative, since a
 * shared step may be one within 12 significant digits of the one asked for (the cache's own
 * rule, PropagatorCache.get), far inside the exact path's 1e-12.
 */
import { describe, expect, it } from 'vitest';
import { scheduleOf } from '../../models/building/events.ts';
import { CompartmentSystem } from '../../models/building/system.ts';
import { steadyStateFigures } from '../../models/figures/steady-state.ts';
import { normaliseScenario } from '../../models/scenario/normalize.ts';
import { PropagatorCache } from '../../models/solving/linear-path.ts';
import { emptyStats } from '../../models/solving/numerics/ode-system.ts';
import { solveSchedule } from '../../models/solving/solve.ts';

// Fictional "rondaxin": by mouth daily, and the same as a 2-hour infusion (an input while it runs).
const oral = {
  title: 'Rondaxin 200 mg by mouth daily',
  compartments: [{ id: 'gut' }, { id: 'central', volume: 30 }, { id: 'tissue', volume: 60 }],
  transfers: [
    { from: 'gut', to: 'central', k: 1.1 },
    { from: 'central', to: 'tissue', cl: 9 },
    { from: 'tissue', to: 'central', cl: 9 },
    { from: 'central', cl: 4.5 },
  ],
  doses: [{ into: 'gut', amount: 200, every: 24, count: 30 }],
  output: { end: 720, step: 1 },
};
const infusion = { ...oral, title: 'Rondaxin 200 mg over 2 h daily', doses: [{ into: 'central', amount: 200, every: 24, count: 30, duration: 2 }] };

function steadyBothWays(input: unknown) {
  const model = normaliseScenario(input);
  if (!model.ok) throw new Error('scenario rejected');
  const system = new CompartmentSystem(model.value);
  const run = solveSchedule(model.value, system, scheduleOf(model.value), new Float64Array(system.dimension), emptyStats());
  if (!run.propagatorCache) throw new Error('not the exact path');
  const own = steadyStateFigures(model.value, system, emptyStats(), { approach: false, profile: false });
  const shared = steadyStateFigures(model.value, system, emptyStats(), { approach: false, profile: false, sharePropagators: run.propagatorCache });
  return { own, shared };
}

describe('propagators shared between a run and its steady-state cycle', () => {
  it('are shared for the same matrix and equal inputs only, steps asked once still counted per cache', () => {
    const n = 2;
    const m = Float64Array.of(-0.5, 0.1, 0.5, -0.1);
    const none = [new Float64Array(n)];
    const a = new PropagatorCache(m, n, none);
    const p = a.get(24, 0);
    const b = new PropagatorCache(m, n, [new Float64Array(n)], undefined, a);
    expect(b.get(24, 0)).toBe(p);
    expect(b.computed).toBe(0);
    // Another input under key 0, or another matrix (even equal in value): nothing shared.
    const c = new PropagatorCache(m, n, [Float64Array.of(1, 0)], undefined, a);
    expect(c.get(24, 0)).not.toBe(p);
    const d = new PropagatorCache(m.slice(), n, none, undefined, a);
    expect(d.get(24, 0)).not.toBe(p);
    expect([c.computed, d.computed]).toEqual([1, 1]);
    // A step asked for once by the run is not "repeated" for the cycle: it keeps its own account.
    expect(a.getIfRepeated(0.3, 0)).toBeNull();
    expect(b.getIfRepeated(0.3, 0)).toBeNull();
  });

  for (const [name, input] of [
    ['by mouth', oral],
    ['by infusion', infusion],
  ] as const) {
    it(`give the same steady-state figures ${name}`, () => {
      const { own, shared } = steadyBothWays(input);
      if (!own?.reached || !shared?.reached) throw new Error('no steady state');
      const close = (x: number, y: number) => expect(Math.abs(x - y)).toBeLessThanOrEqual(1e-13 * Math.abs(y));
      own.compartments.forEach((c, i) => {
        const s = shared.compartments[i];
        close(s.cmax, c.cmax);
        close(s.trough, c.trough);
        close(s.cmin, c.cmin);
        close(s.auc, c.auc);
        close(s.tmax, c.tmax);
      });
    });
  }
});
