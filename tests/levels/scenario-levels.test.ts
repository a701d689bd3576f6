/**
 * Clock times and observations in the scenario: date-time instants read as elapsed time from the
 * origin (bit for bit the same run as the same times in hours), every bad input refused at its
 * path, and the prediction at an observation's time checked against the closed-form
 * one-compartment model.
 */
import { describe, expect, it } from 'vitest';
import { normaliseScenario, simulate, type Problem } from '../../models/index.ts';
import { resultToJson } from '../../models/result/result-format.ts';

/** A fictional oral drug twice daily, times in hours. */
function inHours(): Record<string, any> {
  return {
    title: 'Fictional compound pellimore',
    compartments: [{ id: 'gut' }, { id: 'central', volume: '30 L' }],
    transfers: [
      { from: 'gut', to: 'central', k: '1.4 1/h' },
      { from: 'central', cl: '3 L/h' },
    ],
    doses: [{ into: 'gut', amount: '250 mg', at: 0, every: '12 h', through: 36, bioavailability: 0.9 }],
    output: { end: 60, step: 0.5, times: [23.75] },
    observations: [
      { time: 23.75, compartment: 'central', concentration: '4.1 mg/L' },
      { time: '50.5 h', compartment: 'central', belowLimit: true, limit: '0.5 mg/L' },
    ],
  };
}

/** The same scenario with its instants as clock times (origin 2026-03-04T08:00+01:00). */
function onTheClock(): Record<string, any> {
  const s = inHours();
  s.clock = { zone: '+01:00' };
  s.doses[0].at = '2026-03-04T08:00';
  s.doses[0].through = '2026-03-05T20:00';
  s.output.end = '2026-03-06T20:00';
  s.output.times = ['2026-03-05T07:45'];
  s.observations[0].time = '2026-03-05T07:45';
  s.observations[1].time = '2026-03-06T10:30';
  return s;
}

function problemsOf(s: unknown): Problem[] {
  const r = normaliseScenario(s);
  if (r.ok) throw new Error('accepted');
  return r.problems;
}

describe('date-time instants', () => {
  it('give bit for bit the same result as the same times in hours', () => {
    const a = simulate(inHours());
    const b = simulate(onTheClock());
    if (!a.ok || !b.ok) throw new Error('failed');
    const ja = resultToJson(a.value);
    const jb = resultToJson(b.value);
    expect(jb.times).toEqual(ja.times);
    expect(jb.compartments).toEqual(ja.compartments);
    expect(jb.observations).toEqual(ja.observations);
    expect(jb.metrics).toEqual(ja.metrics);
    expect(ja.clock).toBeUndefined();
    expect(jb.clock).toMatchObject({ origin: '2026-03-04T08:00+01:00', zone: '+01:00', originFrom: 'first dose' });
  });

  it('convert to the scenario time unit (minutes)', () => {
    const s = onTheClock();
    s.units = { time: 'min' };
    s.doses[0].every = '720 min';
    s.output.step = 30;
    const m = normaliseScenario(s);
    if (!m.ok) throw new Error(JSON.stringify(m.problems));
    expect(m.value.observations[0].time).toBe(23.75 * 60);
    expect(m.value.end).toBe(60 * 60);
  });

  it('refuses each bad instant at its path', () => {
    const before = onTheClock();
    before.clock.origin = '2026-03-04T08:00';
    before.observations[0].time = '2026-03-04T06:00';
    expect(problemsOf(before)).toEqual([{ path: 'observations[0].time', message: 'is 2 h before the clock origin 2026-03-04T08:00+01:00' }]);

    const malformed = onTheClock();
    malformed.output.times = ['2026-03-05T7:45'];
    expect(problemsOf(malformed)).toEqual([{ path: 'output.times[0]', message: expect.stringContaining("'2026-03-05T7:45' is not an ISO 8601 date-time") }]);

    const duration = onTheClock();
    duration.doses[0].every = '2026-03-04T20:00';
    expect(problemsOf(duration)).toContainEqual({ path: 'doses[0].every', message: expect.stringMatching(/^must be a duration, not a date-time/) });

    const noOrigin = inHours();
    noOrigin.observations[0].time = '2026-03-05T07:45';
    expect(problemsOf(noOrigin)).toEqual([{ path: 'observations[0].time', message: expect.stringContaining('no clock origin') }]);

    const zone = onTheClock();
    zone.clock.zone = 'Europe/Paris';
    expect(problemsOf(zone)).toContainEqual({ path: 'clock.zone', message: expect.stringContaining('named zones are not read') });

    const dateOnly = onTheClock();
    dateOnly.clock.origin = '2026-03-04';
    expect(problemsOf(dateOnly)).toContainEqual({ path: 'clock.origin', message: expect.stringContaining('a date without a time of day') });
  });
});

describe('observations', () => {
  it('refuses each bad observation at its path', () => {
    const s = inHours();
    s.observations = [
      { time: 2, compartment: 'gut', concentration: 1 },
      { time: 3, compartment: 'central', concentration: '-0.2 mg/L' },
      { time: 4, compartment: 'central', belowLimit: true },
      { time: 5, compartment: 'central', belowLimit: true, concentration: 0.8, limit: 0.5 },
      { time: 6, compartment: 'central' },
      { time: 7, compartment: 'blood', concentration: 1 },
      { time: 61, compartment: 'central', concentration: 1 },
      { time: 8, compartment: 'central', concentration: '3 mg' },
    ];
    expect(problemsOf(s)).toEqual([
      { path: 'observations[0].compartment', message: "'gut' has no volume, so it has no concentration to compare a measured level with" },
      { path: 'observations[1].concentration', message: 'must not be negative' },
      { path: 'observations[2].limit', message: 'is required with belowLimit: true: the limit of quantification the level is below' },
      { path: 'observations[3].concentration', message: 'is 0.8, at or above its limit 0.5, yet the level is marked belowLimit' },
      { path: 'observations[4].concentration', message: 'is required (it may be left out only for a level marked belowLimit: true)' },
      { path: 'observations[5].compartment', message: "no compartment named 'blood' (compartments are 'gut', 'central')" },
      { path: 'observations[6].time', message: expect.stringContaining('outside the simulated span 0 to 60 h') },
      { path: 'observations[7].concentration', message: expect.stringContaining('amount/volume') },
    ]);
  });

  it('refuses a file reference outside the command line', () => {
    const s = inHours();
    s.observations = { file: 'levels.csv' };
    expect(problemsOf(s)).toEqual([{ path: 'observations.file', message: expect.stringContaining('read by the command line') }]);
  });

  it('predict the closed-form one-compartment oral level at each observation time', () => {
    // Gibaldi & Perrier, Pharmacokinetics (2nd ed.), eq. 1.94 with superposition over doses:
    // C(t) = Σ F·D·ka / (V·(ka − k)) · (e^{−k(t−tᵢ)} − e^{−ka(t−tᵢ)}) for every dose tᵢ < t.
    const [F, D, ka, k, V] = [0.9, 250, 1.4, 3 / 30, 30];
    const closedForm = (t: number) =>
      [0, 12, 24, 36].filter((ti) => ti < t).reduce((c, ti) => c + ((F * D * ka) / (V * (ka - k))) * (Math.exp(-k * (t - ti)) - Math.exp(-ka * (t - ti))), 0);
    const times = [0.3, 5.123, 12, 23.75, 37.9, 59.99];
    for (const method of ['exact', 'dopri5', 'rosenbrock']) {
      const s = inHours();
      s.solver = { method };
      // A coarse output step: the prediction must come from the continuous solution, not the grid.
      s.output.step = 6;
      s.observations = times.map((time) => ({ time, compartment: 'central', concentration: 5 }));
      const r = simulate(s);
      if (!r.ok) throw new Error(JSON.stringify(r.problems));
      r.value.observations.forEach((o, i) => {
        const expected = closedForm(times[i]);
        // The exact path is exact to rounding; the adaptive ones to their tolerance (rtol 1e-8, atol 1e-10 mg).
        const tolerance = method === 'exact' ? 1e-11 : 2e-6;
        expect(Math.abs(o.predicted - expected)).toBeLessThanOrEqual(tolerance * Math.max(1, expected));
        expect(o.residual).toBeCloseTo(5 - o.predicted, 12);
      });
    }
  });

  it('keeps a level below the limit without a residual, with its limit in the concentration unit', () => {
    const s = inHours();
    s.units = { amount: 'ug', volume: 'L' };
    s.observations[0].concentration = '4.1 mg/L';
    const r = simulate(s);
    if (!r.ok) throw new Error(JSON.stringify(r.problems));
    const [measured, below] = r.value.observations;
    expect(measured.concentration).toBeCloseTo(4100, 9);
    expect(below).toMatchObject({ belowLimit: true, concentration: null, residual: null, path: 'observations[1]' });
    expect(below.limit).toBeCloseTo(500, 9);
  });
});
