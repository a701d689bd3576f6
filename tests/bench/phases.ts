/**
 * Where the time of one simulate() call goes: the steps of models/simulate.ts
 * simulateModel() replayed one by one with the same exported functions, each timed.
 * (Mass balance, warnings and the result object are left out: they are cheap.)
 */
import { disposition } from '../../models/building/disposition.ts';
import { scheduleOf } from '../../models/building/events.ts';
import { CurveProbe } from '../../models/figures/curve-probe.ts';
import { exposureFigures } from '../../models/figures/exposure.ts';
import { normaliseScenario } from '../../models/scenario/normalize.ts';
import { emptyStats } from '../../models/solving/numerics/ode-system.ts';
import { outputRows, solveSchedule } from '../../models/simulate.ts';
import { steadyStateFigures } from '../../models/figures/steady-state.ts';
import { CompartmentSystem } from '../../models/building/system.ts';

export const phaseNames = [
  'normalise',
  'system + schedule',
  'solve (solveSchedule)',
  'output rows',
  'sample grid',
  'exposure figures',
  'steady state',
  'disposition',
] as const;

export type PhaseName = (typeof phaseNames)[number];

export function simulatePhases(scenario: unknown): Record<PhaseName, number> {
  const out = {} as Record<PhaseName, number>;
  let t = performance.now();
  const lap = (name: PhaseName) => {
    const now = performance.now();
    out[name] = now - t;
    t = now;
  };
  const model = normaliseScenario(scenario);
  if (!model.ok) throw new Error(JSON.stringify(model.problems));
  const m = model.value;
  lap('normalise');
  const system = new CompartmentSystem(m);
  const schedule = scheduleOf(m);
  lap('system + schedule');
  const stats = emptyStats();
  const solution = solveSchedule(m, system, schedule, new Float64Array(system.dimension), stats);
  lap('solve (solveSchedule)');
  const rows = outputRows(m.outputTimes, schedule);
  lap('output rows');
  const series = m.compartments.map((c) => ({ amount: new Float64Array(rows.times.length), volume: c.volume }));
  const conc = m.compartments.map((c) => (c.volume === null ? null : new Float64Array(rows.times.length)));
  solution.trajectory.sample(rows.times, rows.sides, (row, state) => {
    for (let i = 0; i < series.length; i++) {
      series[i].amount[row] = state[i];
      const ci = conc[i];
      const v = series[i].volume;
      if (ci && v !== null) ci[row] = state[i] / v;
    }
  });
  lap('sample grid');
  exposureFigures(m, system.layout, new CurveProbe(solution.trajectory, system, schedule));
  lap('exposure figures');
  steadyStateFigures(m, system, stats);
  lap('steady state');
  disposition(system);
  lap('disposition');
  return out;
}
