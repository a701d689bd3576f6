/**
 * The steady state as the regimen continued, kept apart from the simulated course: its own
 * cycle as a curve, a warning when the course ends before it, and dose lines named as people
 * number them.
 */
import { describe, expect, it } from 'vitest';
import { simulate, type SimulationResult } from '../../models/simulate.ts';

const k = 0.01;
const V = 10;
const tau = 12;
const dose = 100;

function run(end: number, window: { above?: number; below?: number } | null = null): SimulationResult {
  const r = simulate({
    title: 'slow elimination',
    compartments: [{ id: 'central', volume: V }],
    transfers: [{ from: 'central', k }],
    doses: [{ into: 'central', amount: dose, every: tau, label: 'maintenance' }],
    output: { end, step: 1, thresholds: window ? [{ compartment: 'central', ...window }] : [] },
  });
  if (!r.ok) throw new Error(JSON.stringify(r.problems));
  return r.value;
}

describe('the steady-state cycle as a curve', () => {
  it('equals the one-compartment bolus closed form C(t) = (D/V)·e^{−kt}/(1 − e^{−kτ})', () => {
    // Gibaldi & Perrier, Pharmacokinetics, 2nd ed., ch. 3 (multiple IV bolus dosing at steady state).
    const profile = run(48).metrics.steadyState?.profile;
    expect(profile).toBeTruthy();
    if (!profile) return;
    const c = profile.compartments.find((x) => x.compartment === 'central');
    expect(c).toBeTruthy();
    expect(profile.times[0]).toBe(0);
    expect(profile.times[profile.times.length - 1]).toBe(tau);
    expect(profile.times.length).toBeGreaterThanOrEqual(241);
    let worst = 0;
    profile.times.forEach((t, i) => {
      // The first row is just before the bolus at 0: the trough, i.e. the value at τ.
      const expected = ((dose / V) * Math.exp(-k * (i === 0 ? tau : t))) / (1 - Math.exp(-k * tau));
      worst = Math.max(worst, Math.abs(c!.concentration[i] / expected - 1));
    });
    // The exact path: rounding only (the closed form (I − e^{Mτ})⁻¹g and the propagators), 1e-12 with room.
    expect(worst).toBeLessThan(1e-12);
  });
});

describe('a course that ends before steady state says so', () => {
  it('warns with the time to 90% and the steady-state peak against the window', () => {
    // 90% of steady state at ln 10/k = 230 h (bolus dosing; R&T ch. 10); the span ends at 48 h.
    const result = run(48, { above: 4, below: 8 });
    const peak = dose / V / (1 - Math.exp(-k * tau));
    const warning = result.diagnostics.warnings.find((w) => w.includes('not at steady state'));
    expect(warning).toBeDefined();
    expect(warning).toMatch(/'central' is not at steady state by the end of the span \(48 h\): 90% of steady state takes 230\.25\d* h from the first maintenance dose at 0 h/);
    expect(warning).toContain(`the peak would be ${Number(peak.toPrecision(6))} mg/L, above the window's upper edge of 8 mg/L`);
  });

  it('says nothing of a regimen that stopped within the span', () => {
    const r = simulate({
      title: 'four doses',
      compartments: [{ id: 'central', volume: V }],
      transfers: [{ from: 'central', k }],
      doses: [{ into: 'central', amount: dose, every: tau, count: 4 }],
      output: { end: 96, step: 1 },
    });
    if (!r.ok) throw new Error(JSON.stringify(r.problems));
    expect(r.value.diagnostics.warnings.filter((w) => w.includes('not at steady state'))).toEqual([]);
  });

  it('says nothing once the course has come within 90%', () => {
    const result = run(240);
    expect(result.diagnostics.warnings.filter((w) => w.includes('not at steady state'))).toEqual([]);
  });
});

describe('dose lines named as people number them', () => {
  it('"dose line 1 — maintenance", not "doses[0]"', () => {
    const message = run(48).metrics.steadyState?.message ?? '';
    expect(message).toMatch(/^steady state of dose line 1 — maintenance over a dosing cycle of 12 h/);
    expect(message).not.toMatch(/doses\[/);
  });
});
