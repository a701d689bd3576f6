/**
 * The cost of the steady-state figures is bounded and reported (issue 8 point 3, issue 9
 * point 6): counted in cycles and integrations (`work`), never timed. An infusion much longer
 * than the dosing interval folds into one cycle in closed form; a linear model takes the
 * closed form whatever method integrates its curves; a saturable search stops at the cycle limit.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { limits } from '../../models/scenario/limits.ts';
import type { ScenarioInput } from '../../models/scenario/schema.ts';
import { cycleAdministrations, maintenanceLines, type SteadyStateFigures } from '../../models/figures/steady-state.ts';
import { normaliseScenario } from '../../models/scenario/normalize.ts';
import { run } from '../reference/helpers.ts';

const sample = (name: string): ScenarioInput => JSON.parse(readFileSync(new URL(`../../samples/${name}`, import.meta.url), 'utf8')) as ScenarioInput;

function withDose(base: ScenarioInput, line: number, change: Record<string, unknown>, solver?: Record<string, unknown>): ScenarioInput {
  const copy = structuredClone(base) as ScenarioInput & { doses: Record<string, unknown>[] };
  Object.assign(copy.doses[line], change);
  return solver ? { ...copy, solver: solver as ScenarioInput['solver'] } : copy;
}

function steady(scenario: ScenarioInput): SteadyStateFigures {
  const ss = run(scenario).metrics.steadyState;
  if (!ss?.work) throw new Error('no steady-state figures with their work');
  return ss;
}

describe('an infusion far longer than the dosing interval', () => {
  it.each([1e-4, 1e-6, 1e-9])('brennock 400 mg at %s mg/h every 12 h folds into at most three pieces per dose', (rate) => {
    // Duration 400/rate h: 4e6 to 4e11 h, 3e5 to 3e10 dosing intervals.
    const model = normaliseScenario(withDose(sample('brennock-oral-bid.json'), 0, { rate }));
    if (!model.ok) throw new Error('brennock must normalise');
    const lines = maintenanceLines(model.value);
    expect(cycleAdministrations(lines, 12).length).toBeLessThanOrEqual(3);
  });

  it.each([1e-4, 1e-6])('brennock at %s mg/h: closed form, two cycles and at most four integrations', (rate) => {
    const ss = steady(withDose(sample('brennock-oral-bid.json'), 0, { rate }));
    expect(ss.reached).toBe(true);
    expect(ss.work?.cycles).toBeLessThanOrEqual(2);
    expect(ss.work?.integrations).toBeLessThanOrEqual(4);
    // At steady state the overlapping infusions add up to a constant input F·D/τ, so
    // Css = F·D/(τ·CL) (R&T ch. 11): 0.85·400/(12·4.2) = 5.952 mg/L.
    const c = ss.compartments.find((x) => x.compartment === 'central');
    // Within the ripple of the one partial infusion in each cycle (its rate is below 1e-4 mg/h: < 1e-4 relative).
    expect(Math.abs((c?.cavg ?? NaN) - (0.85 * 400) / (12 * 4.2))).toBeLessThan(1e-4 * 6);
  });

  it('a saturable model: the search costs the same for a 30-day and a 34,000-year infusion', () => {
    const skorvel = sample('skorvel-saturable-dose-increase.json');
    const short = steady(withDose(skorvel, 1, { duration: '30 day' }));
    const long = steady(withDose(skorvel, 1, { rate: 1e-6 }));
    expect(short.reached && long.reached).toBe(true);
    // Only the approach grows with the infusion, and it stops at the cycle limit.
    expect(long.cycles).toBeLessThanOrEqual(short.cycles + 10);
    expect(long.work?.cycles).toBeLessThanOrEqual(limits.steadyStateCycles + long.cycles + 2);
  });
});

describe('a linear model integrated by a numerical method', () => {
  it.each([{ method: 'rosenbrock' }, { method: 'dop853' }, { method: 'abm2', step: 0.0053 }, { method: 'euler', step: 0.01 }])(
    'brennock with %o: the closed form, one cycle integrated for the figures',
    (solver) => {
      const ss = steady({ ...sample('brennock-oral-bid.json'), solver } as ScenarioInput);
      expect(ss.reached).toBe(true);
      expect(ss.method).toBe('closed-form');
      expect(ss.work?.cycles).toBeLessThanOrEqual(2);
      expect(ss.work?.integrations).toBeLessThanOrEqual(4);
    },
  );
});

describe('a saturable model', () => {
  it('skorvel: Newton steps find it in a few dozen cycles, and the work is reported', () => {
    const ss = steady(sample('skorvel-saturable-dose-increase.json'));
    expect(ss.reached).toBe(true);
    expect(ss.cycles).toBeLessThan(50);
    // Search and figures, plus the approach from empty (chunks of 16 cycles and more, stopping at 95%).
    expect(ss.work?.cycles).toBeGreaterThanOrEqual(ss.cycles);
    expect(ss.work?.cycles).toBeLessThan(ss.cycles + 100);
    expect(ss.work?.steps).toBeGreaterThan(0);
  });
});
