// The final dose's interval of a finite course in a population: read over one dosing interval
// (as long as the one before it) when the span covers it, its trough the level where the next
// dose would have fallen due (common practice for the last dose of a course). A span that ends
// sooner cuts it short: "last interval" is then the interval before it, and the result says so.
// Checked against the superposition of one-compartment boluses, C(t) = Σ (D/V)·e^{−(CL/V)(t − tₖ)}
// (any pharmacokinetics text; e.g. Gibaldi & Perrier, multiple dosing, from memory).
import { describe, expect, it } from 'vitest';
import { planPopulation, simulatePopulation } from '../../models/population/population.ts';

function course(end: number, cv = '20%') {
  return {
    title: 'Fictional "corvenal" 100 mg every 12 h, 8 doses',
    compartments: [{ id: 'central', volume: { typical: '20 L', cv, name: 'V' } }],
    transfers: [{ from: 'central', cl: { typical: '4 L/h', cv, name: 'CL' } }],
    doses: [{ into: 'central', amount: '100 mg', every: '12 h', count: 8 }],
    output: { end: `${end} h`, step: '1 h' },
    population: { subjects: 20, seed: 7, periods: ['last interval', 7, 8] },
  };
}

type Figures = Record<string, { percentiles?: Record<string, number> }>;

/** The same window read twice (by name and by number) agrees to rounding: its rows are evaluated from different recent states. */
function same(a: unknown, b: unknown, tolerance = 1e-12): boolean {
  const x = (a as Record<string, Figures>).central;
  const y = (b as Record<string, Figures>).central;
  return Object.keys(x).every((f) =>
    Object.entries(x[f].percentiles ?? {}).every(([q, v]) => Math.abs(v - (y[f].percentiles?.[q] ?? NaN)) <= tolerance * Math.max(1e-300, Math.abs(v))),
  );
}

function periodsOf(end: number, cv?: string) {
  const run = simulatePopulation(course(end, cv));
  if (!run.ok) throw new Error(JSON.stringify(run.problems));
  return { run: run.value, byPeriod: new Map(run.value.periods.map((p) => [p.period, p.compartments])) };
}

describe('the last interval of a population', () => {
  it('is the final dose\'s, one interval long, when the span covers it: the trough is C(96 h) by superposition', () => {
    const plan = planPopulation(course(100));
    if (!plan.ok) throw new Error(JSON.stringify(plan.problems));
    expect(plan.value.notes).toEqual([]);
    const { byPeriod } = periodsOf(100);
    expect(same(byPeriod.get('last interval'), byPeriod.get('dosing interval 8'))).toBe(true);
    expect(same(byPeriod.get('last interval'), byPeriod.get('dosing interval 7'))).toBe(false);
    // Without variability every percentile is the typical subject's: the trough 12 h after the 8th dose.
    const typical = periodsOf(100, '0%').byPeriod.get('last interval') as Record<string, Record<string, { percentiles: Record<string, number> }>>;
    const k = 4 / 20;
    let c96 = 0;
    for (let d = 0; d < 8; d++) c96 += (100 / 20) * Math.exp(-k * (96 - 12 * d));
    expect(Math.abs(typical.central.trough.percentiles['50'] - c96)).toBeLessThanOrEqual(1e-9 * c96);
  });

  it('is the interval before when the span ends less than an interval after the final dose, and the result says so', () => {
    const plan = planPopulation(course(90));
    if (!plan.ok) throw new Error(JSON.stringify(plan.problems));
    const note = '"last interval" is dosing interval 7 (72 h to 84 h): the span ends 6 h after the final dose, less than a dosing interval, so the final dose\'s interval (8) is cut short and read only by its number';
    expect(plan.value.notes).toEqual([note]);
    const { run, byPeriod } = periodsOf(90);
    expect(same(byPeriod.get('last interval'), byPeriod.get('dosing interval 7'))).toBe(true);
    expect(same(byPeriod.get('last interval'), byPeriod.get('dosing interval 8'))).toBe(false);
    expect(run.diagnostics.warnings).toContain(note);
  });
});
