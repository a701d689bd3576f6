/**
 * The exact path between its grid points: LinearTrajectory.stateAt at arbitrary times
 * (what peak and crossing searches evaluate) against x(t) = e^{M(t − a)}·x(a) from the
 * state just after the breakpoint a that opens the piece, with the exponential from mathjs
 * (an independent library) and from the engine's own Padé propagator evaluated afresh.
 */
import { expm as mathjsExpm, matrix } from 'mathjs';
import { norm1 } from '../../models/linalg/dense.ts';
import { createExpmWorkspace, createPropagator, propagator } from '../../models/linalg/expm.ts';
import { describe, expect, it } from 'vitest';
import type { LinearTrajectory } from '../../models/linear-path.ts';
import { normaliseScenario } from '../../models/normalize.ts';
import { scheduleOf } from '../../models/events.ts';
import { emptyStats } from '../../models/numerics/ode-system.ts';
import { solveSchedule } from '../../models/simulate.ts';
import { CompartmentSystem } from '../../models/system.ts';

// Fictional "rondaxin" by mouth every 24 h for a year: the pieces sit at times up to 8760 h,
// where absolute times carry rounding of 1e-12 h, and knot steps repeat from piece to piece.
const scenario = {
  title: 'Rondaxin 200 mg by mouth daily',
  compartments: [{ id: 'gut' }, { id: 'central', volume: 30 }, { id: 'tissue', volume: 60 }],
  transfers: [
    { from: 'gut', to: 'central', k: 1.1 },
    { from: 'central', to: 'tissue', cl: 9 },
    { from: 'tissue', to: 'central', cl: 9 },
    { from: 'central', cl: 4.5 },
  ],
  doses: [{ into: 'gut', amount: 200, bioavailability: 0.75, every: 24, count: 365 }],
  output: { end: 8760, step: 1 },
};

describe('exact path between grid points', () => {
  it('stateAt equals e^{M(t − a)}·x(a) at 40 times over the last 60 days of a year: mathjs within its error bound, a fresh Padé propagator within 2e-14', () => {
    const model = normaliseScenario(scenario);
    if (!model.ok) throw new Error('scenario rejected');
    const system = new CompartmentSystem(model.value);
    const n = system.dimension;
    const m = system.linearMatrix;
    const solution = solveSchedule(model.value, system, scheduleOf(model.value), new Float64Array(n), emptyStats());
    const trajectory = solution.trajectory as LinearTrajectory;
    const rows = Array.from({ length: n }, (_, i) => Array.from(m.subarray(i * n, (i + 1) * n)));
    const out = new Float64Array(n);
    const x0 = new Float64Array(n);
    const ws = createExpmWorkspace(n + 1);
    const fresh = createPropagator(n);
    let worstMathjs = 0;
    let worstPade = 0;
    let boundMathjs = 0;
    for (let j = 0; j < 40; j++) {
      // Times that fall on no knot and on no output point: a fraction of an hour past a day's start.
      const t = 24 * (300 + Math.floor((j * 59) / 40)) + 0.05 + ((j * 0.61) % 23.9);
      trajectory.stateAt(t, 'right', out);
      const k = trajectory.locate(t, 'right');
      trajectory.pieceState(k, x0);
      const h = t - trajectory.pieceStart(k);
      const e = mathjsExpm(matrix(rows.map((r) => r.map((v) => v * h)))).toArray() as number[][];
      propagator(m, n, h, null, ws, fresh);
      // Amounts (gut, central, tissue), relative to the largest of them: the gut empties to 1e-9 mg by
      // the end of a day, where rounding on the 100 mg scale is all that is left of it.
      const viaMathjs = [0, 1, 2].map((i) => e[i].reduce((s, v, q) => s + v * x0[q], 0));
      const viaPade = [0, 1, 2].map((i) => fresh.phi.subarray(i * n, (i + 1) * n).reduce((s, v, q) => s + v * x0[q], 0));
      const scale = Math.max(...viaMathjs.map(Math.abs));
      for (const i of [0, 1, 2]) {
        worstMathjs = Math.max(worstMathjs, Math.abs(out[i] - viaMathjs[i]) / scale);
        worstPade = Math.max(worstPade, Math.abs(out[i] - viaPade[i]) / scale);
      }
      // The policy of tests/linalg/expm.test.ts: 1024·max(1, ‖Mh‖₁)·u (Higham 2005, §3).
      boundMathjs = Math.max(boundMathjs, 1024 * Math.max(1, norm1(m, n) * h) * 2 ** -53);
    }
    expect(worstMathjs).toBeLessThan(boundMathjs);
    // The same formula evaluated two ways by the engine (Padé from the piece start; knots plus Taylor
    // sub-steps): measured 9e-15 here; 2e-14 (≈ 90u) catches knot times or steps off by 1e-13 h.
    expect(worstPade).toBeLessThan(2e-14);
    expect(worstPade).toBeGreaterThan(0);
  });
});

describe('exact path between grid points, stiff model', () => {
  it('a fast exchange (k = 2000 1/h): stateAt, through a Padé propagator beyond the Taylor limit, equals mathjs expm', () => {
    // Fictional "quellamine": central ⇄ a small fast-exchanging compartment. ‖M‖·h reaches thousands
    // between knots, where the engine switches from Taylor sub-steps to one Padé propagator.
    const model = normaliseScenario({
      title: 'Quellamine 100 mg by mouth daily',
      compartments: [{ id: 'gut' }, { id: 'central', volume: 10 }, { id: 'fast', volume: 5 }],
      transfers: [
        { from: 'gut', to: 'central', k: 1 },
        { from: 'central', to: 'fast', k: 2000 },
        { from: 'fast', to: 'central', k: 2000 },
        { from: 'central', k: 0.1 },
      ],
      doses: [{ into: 'gut', amount: 100, every: 24, count: 10 }],
      output: { end: 240, step: 1 },
    });
    if (!model.ok) throw new Error('scenario rejected');
    const system = new CompartmentSystem(model.value);
    const n = system.dimension;
    const m = system.linearMatrix;
    const trajectory = solveSchedule(model.value, system, scheduleOf(model.value), new Float64Array(n), emptyStats()).trajectory as LinearTrajectory;
    const rows = Array.from({ length: n }, (_, i) => Array.from(m.subarray(i * n, (i + 1) * n)));
    const out = new Float64Array(n);
    const x0 = new Float64Array(n);
    let worst = 0;
    let bound = 0;
    for (const t of [30.7, 55.25, 100.9, 171.3, 239.5]) {
      trajectory.stateAt(t, 'right', out);
      const k = trajectory.locate(t, 'right');
      trajectory.pieceState(k, x0);
      const h = t - trajectory.pieceStart(k);
      const e = mathjsExpm(matrix(rows.map((r) => r.map((v) => v * h)))).toArray() as number[][];
      const ref = [0, 1, 2].map((i) => e[i].reduce((s, v, q) => s + v * x0[q], 0));
      const scale = Math.max(...ref.map(Math.abs));
      for (const i of [0, 1, 2]) worst = Math.max(worst, Math.abs(out[i] - ref[i]) / scale);
      bound = Math.max(bound, 1024 * Math.max(1, norm1(m, n) * h) * 2 ** -53);
    }
    expect(worst).toBeLessThan(bound);
    expect(out[2]).toBeGreaterThan(0);
  });
});
