/**
 * The exact path between its grid points: LinearTrajectory.stateAt at arbitrary times
 * (what peak and crossing searches evaluate) against x(t) = e^{M(t − a)}·x(a) from the
 * state just after the breakpoint a that opens the piece, with the exponential from mathjs
 * (an independent library) and from the engine's own Padé propagator evaluated afresh.
 */
import { expm as mathjsExpm, matrix } from 'mathjs';
import { norm1 } from '../../models/solving/linalg/dense.ts';
import { createExpmWorkspace, createPropagator, propagator } from '../../models/solving/linalg/expm.ts';
import { describe, expect, it } from 'vitest';
import type { LinearTrajectory } from '../../models/solving/linear-path.ts';
import { normaliseScenario } from '../../models/scenario/normalize.ts';
import { scheduleOf } from '../../models/building/events.ts';
import { emptyStats } from '../../models/solving/numerics/ode-system.ts';
import { solveSchedule } from '../../models/simulate.ts';
import { CompartmentSystem } from '../../models/building/system.ts';

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

/** The exact path's trajectory of a scenario, with its system matrix. */
function solveExact(input: unknown): { n: number; m: Float64Array; trajectory: LinearTrajectory } {
  const model = normaliseScenario(input);
  if (!model.ok) throw new Error('scenario rejected');
  const system = new CompartmentSystem(model.value);
  const n = system.dimension;
  const solution = solveSchedule(model.value, system, scheduleOf(model.value), new Float64Array(n), emptyStats());
  return { n, m: system.linearMatrix, trajectory: solution.trajectory as LinearTrajectory };
}

/**
 * stateAt(t) and e^{M(t − a)}·x(a) from the piece start a, with the exponential from mathjs:
 * the amounts of the first three states, the mathjs values, and the step h = t − a.
 */
function probe(run: ReturnType<typeof solveExact>, t: number): { ours: number[]; viaMathjs: number[]; x0: Float64Array; h: number } {
  const { n, m, trajectory } = run;
  const out = new Float64Array(n);
  const x0 = new Float64Array(n);
  trajectory.stateAt(t, 'right', out);
  const k = trajectory.locate(t, 'right');
  trajectory.pieceState(k, x0);
  const h = t - trajectory.pieceStart(k);
  const rows = Array.from({ length: n }, (_, i) => Array.from(m.subarray(i * n, (i + 1) * n), (v) => v * h));
  const e = mathjsExpm(matrix(rows)).toArray() as number[][];
  const viaMathjs = [0, 1, 2].map((i) => e[i].reduce((s, v, q) => s + v * x0[q], 0));
  return { ours: [out[0], out[1], out[2]], viaMathjs, x0, h };
}

/** Largest difference relative to the largest reference amount (small amounts carry the rounding of large ones). */
function worstRelative(ours: number[], reference: number[]): number {
  const scale = Math.max(...reference.map(Math.abs));
  return Math.max(...ours.map((v, i) => Math.abs(v - reference[i]) / scale));
}

/** The policy of tests/linalg/expm.test.ts for mathjs's exponential: 1024·max(1, ‖Mh‖₁)·u (Higham 2005, §3). */
const mathjsBound = (m: Float64Array, n: number, h: number) => 1024 * Math.max(1, norm1(m, n) * h) * 2 ** -53;

describe('exact path between grid points', () => {
  it('stateAt equals e^{M(t − a)}·x(a) at 40 times over the last 60 days of a year: mathjs within its error bound, a fresh Padé propagator within 2e-14', () => {
    const run = solveExact(scenario);
    const { n, m } = run;
    const ws = createExpmWorkspace(n + 1);
    const fresh = createPropagator(n);
    let worstMathjs = 0;
    let worstPade = 0;
    let boundMathjs = 0;
    for (let j = 0; j < 40; j++) {
      // Times that fall on no knot and on no output point: a fraction of an hour past a day's start.
      const t = 24 * (300 + Math.floor((j * 59) / 40)) + 0.05 + ((j * 0.61) % 23.9);
      const { ours, viaMathjs, x0, h } = probe(run, t);
      propagator(m, n, h, null, ws, fresh);
      const viaPade = [0, 1, 2].map((i) => fresh.phi.subarray(i * n, (i + 1) * n).reduce((s, v, q) => s + v * x0[q], 0));
      // Relative to the largest amount: the gut empties to 1e-9 mg by the end of a day, where
      // rounding on the 100 mg scale is all that is left of it.
      worstMathjs = Math.max(worstMathjs, worstRelative(ours, viaMathjs));
      worstPade = Math.max(worstPade, worstRelative(ours, viaPade));
      boundMathjs = Math.max(boundMathjs, mathjsBound(m, n, h));
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
    const run = solveExact({
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
    for (const t of [30.7, 55.25, 100.9, 171.3, 239.5]) {
      const { ours, viaMathjs, h } = probe(run, t);
      expect(worstRelative(ours, viaMathjs)).toBeLessThan(mathjsBound(run.m, run.n, h));
      expect(ours[2]).toBeGreaterThan(0);
    }
  });
});
