// Clock times in the fit's tooltips come from the scenario the fit was computed on. The expected
// labels are computed here independently of models/levels/clock.ts: JS Date arithmetic on UTC
// milliseconds (origin + elapsed time, shifted by the fixed offset, read with toISOString).
import { describe, expect, it } from 'vitest';
import { fitClockAt } from '../../client/src/fit-view.ts';

const offsetMinutes = 330;
// The first dose, written at +05:30, is the origin (the first-dose rule).
const originMs = Date.UTC(2026, 1, 28, 21, 50) - offsetMinutes * 60_000;

function byDateArithmetic(minutes: number): string {
  const iso = new Date(originMs + minutes * 60_000 + offsetMinutes * 60_000).toISOString();
  return `${iso.slice(0, 10)} ${iso.slice(11, 16)} (+05:30)`;
}

const scenario = {
  units: { time: 'min' },
  clock: { zone: '+05:30' },
  doses: [{ into: 'central', amount: '100 mg', at: '2026-03-01T06:00' }, { into: 'central', amount: '100 mg', at: '2026-02-28T21:50' }],
};

describe('fitClockAt', () => {
  it('reads the origin from the earliest dose date-time and converts the fit’s minutes to hours', () => {
    const at = fitClockAt(scenario, 'min');
    // 130 min after 21:50 crosses the month end; 1440 min is a day.
    for (const t of [0, 130, 1440]) expect(at(t)).toBe(byDateArithmetic(t));
  });
  it('follows the fit’s time unit, not another run’s', () => {
    expect(fitClockAt(scenario, 'h')(2)).toBe(byDateArithmetic(120));
  });
  it('gives no clock time without a clock or for a time unit it cannot convert', () => {
    expect(fitClockAt({ doses: [{ at: 0 }] }, 'h')(5)).toBeNull();
    expect(fitClockAt(scenario, 'fortnight')(5)).toBeNull();
    expect(fitClockAt(null, 'h')(5)).toBeNull();
  });
});
