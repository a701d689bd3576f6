// The form's reading of a quantity string: a number with its unit, or, for a clock time,
// the whole text kept as typed (common practice: the form must not change what it cannot show).
import { describe, expect, it } from 'vitest';
import { defaultUnits, splitQuantity } from '../../client/src/quantity.ts';

describe('splitQuantity', () => {
  it('splits a number and its unit', () => {
    expect(splitQuantity('12.5 h', 'time', defaultUnits)).toEqual({ value: '12.5', unit: 'h' });
  });
  it('keeps an ISO 8601 date-time whole, not the number 2026 with a unit "-03-04T08:00"', () => {
    expect(splitQuantity('2026-03-04T08:00', 'time', defaultUnits)).toEqual({ value: '2026-03-04T08:00', unit: null });
    expect(splitQuantity('2026-03-04T08:00+01:00', 'time', defaultUnits)).toEqual({ value: '2026-03-04T08:00+01:00', unit: null });
  });
});
