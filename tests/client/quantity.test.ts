// The form's reading of a quantity string: a number with its unit, or, for a clock time,
// the whole text kept as typed (common practice: the form must not change what it cannot show).
import { describe, expect, it } from 'vitest';
import { clockOf } from '../../models/levels/clock.ts';
import { defaultUnits, instantValue, splitQuantity } from '../../client/src/quantity.ts';

describe('splitQuantity', () => {
  it('splits a number and its unit', () => {
    expect(splitQuantity('12.5 h', 'time', defaultUnits)).toEqual({ value: '12.5', unit: 'h' });
  });
  it('keeps an ISO 8601 date-time whole, not the number 2026 with a unit "-03-04T08:00"', () => {
    expect(splitQuantity('2026-03-04T08:00', 'time', defaultUnits)).toEqual({ value: '2026-03-04T08:00', unit: null });
    expect(splitQuantity('2026-03-04T08:00+01:00', 'time', defaultUnits)).toEqual({ value: '2026-03-04T08:00+01:00', unit: null });
  });
});

describe('instantValue: a date-time counted from the scenario clock, as the server counts it', () => {
  // Worked by hand: 2026-03-04T08:00+01:00 to 2026-03-05T07:45+01:00 is 23 h 45 min.
  const { clock } = clockOf({ origin: '2026-03-04T08:00', zone: '+01:00' }, []);
  it('gives elapsed hours, or minutes in a scenario kept in minutes', () => {
    expect(instantValue('2026-03-05T07:45', defaultUnits, clock)).toBe(23.75);
    expect(instantValue('2026-03-05T07:45', { ...defaultUnits, time: 'min' }, clock)).toBe(1425);
    expect(instantValue('12 h', defaultUnits, clock)).toBe(12);
  });
  it('takes the earliest dose date-time as the origin when the clock gives none, and null without any', () => {
    const first = clockOf(undefined, ['2026-03-04T20:00Z', '2026-03-04T08:00Z', '6 h']).clock;
    expect(instantValue('2026-03-05T08:00Z', defaultUnits, first)).toBe(24);
    expect(instantValue('2026-03-05T08:00Z', defaultUnits, null)).toBeNull();
  });
});
