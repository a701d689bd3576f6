/**
 * Clock times: strict ISO 8601 date-times (ISO 8601-1:2019 extended format, calendar date and
 * time of day), fixed UTC offsets, elapsed time as plain arithmetic on UTC milliseconds.
 * Expected epochs are computed by hand from the Gregorian calendar, checked against
 * Date.UTC's documented meaning (ECMA-262 §21.4.1.28 MakeDay/MakeTime).
 */
import { describe, expect, it } from 'vitest';
import { clockLabel, formatOffset, parseDateTime, parseOffset } from '../../models/levels/clock.ts';

function epoch(text: string, zone = 0): number {
  const r = parseDateTime(text, zone);
  if (!r.ok) throw new Error(r.message);
  return r.value.epochMs;
}

function refusal(text: string): string {
  const r = parseDateTime(text);
  if (r.ok) throw new Error(`${text} was accepted`);
  return r.message;
}

const hour = 3_600_000;

describe('parseDateTime', () => {
  it('reads minutes, seconds, fractions, Z and ±hh:mm offsets', () => {
    // 2026-03-04 is day 20516 since 1970-01-01 (56 years with 14 leap days = 20454 days, then 31 + 28 + 3): from the calendar.
    expect(epoch('2026-03-04T00:00Z')).toBe(20516 * 24 * hour);
    expect(epoch('2026-03-04T08:00')).toBe(20516 * 24 * hour + 8 * hour);
    expect(epoch('2026-03-04T08:00:30')).toBe(20516 * 24 * hour + 8 * hour + 30_000);
    expect(epoch('2026-03-04T08:00:30.250Z')).toBe(20516 * 24 * hour + 8 * hour + 30_250);
    // An offset east of UTC is earlier in UTC: 08:00+01:00 is 07:00Z (ISO 8601 §4.2.5.2).
    expect(epoch('2026-03-04T08:00+01:00')).toBe(epoch('2026-03-04T07:00Z'));
    expect(epoch('2026-03-04T08:00-05:30')).toBe(epoch('2026-03-04T13:30Z'));
    // The zone applies only to a date-time written without an offset.
    expect(epoch('2026-03-04T08:00', 60)).toBe(epoch('2026-03-04T07:00Z'));
    expect(epoch('2026-03-04T08:00Z', 60)).toBe(epoch('2026-03-04T08:00Z'));
  });

  it('counts elapsed time across a month end, a year end and the leap day 2028-02-29 with no daylight-saving shift', () => {
    expect((epoch('2026-04-01T02:00+02:00') - epoch('2026-03-31T20:00+01:00')) / hour).toBe(5);
    expect((epoch('2027-01-01T06:00') - epoch('2026-12-31T18:00')) / hour).toBe(12);
    // 2028 is a leap year (divisible by 4, not by 100): 28 Feb 12:00 → 1 Mar 12:00 is 48 h.
    expect((epoch('2028-03-01T12:00') - epoch('2028-02-28T12:00')) / hour).toBe(48);
    expect((epoch('2028-03-01T00:00') - epoch('2028-02-29T00:00')) / hour).toBe(24);
    // The last Sunday of March (EU daylight saving starts) is an ordinary 24 h with a fixed offset.
    expect((epoch('2026-03-30T08:00+01:00') - epoch('2026-03-29T08:00+01:00')) / hour).toBe(24);
  });

  it('refuses malformed date-times, each with the text as typed', () => {
    expect(refusal('2026-03-04')).toMatch(/'2026-03-04' is a date without a time of day; write the time too, e.g. 2026-03-04T08:00/);
    expect(refusal('2026-03-04 08:00')).toMatch(/put a T between the date and the time/);
    expect(refusal('2027-02-29T08:00')).toBe("'2027-02-29T08:00': 2027-02 has no day 29");
    expect(refusal('2100-02-29T08:00')).toMatch(/has no day 29/); // divisible by 100, not by 400: no leap day
    expect(parseDateTime('2000-02-29T08:00').ok).toBe(true); // divisible by 400: a leap day
    expect(refusal('2026-13-01T08:00')).toMatch(/no month 13/);
    expect(refusal('2026-03-04T24:00')).toMatch(/hour must be 00 to 23/);
    expect(refusal('2026-03-04T08:60')).toMatch(/minute must be 00 to 59/);
    expect(refusal('2026-03-04T08:00:61')).toMatch(/second must be 00 to 59/);
    expect(refusal('2026-03-04T8:00')).toMatch(/is not an ISO 8601 date-time/);
    expect(refusal('2026-03-04T08:00+1')).toMatch(/is not an ISO 8601 date-time/);
    expect(refusal('2026-03-04T08:00+15:00')).toMatch(/offsets run from -14:00 to \+14:00/);
    expect(refusal('0099-03-04T08:00')).toMatch(/1900 or later/);
    // No leniency of Date.parse: words and other orders are not dates.
    expect(refusal('March 4, 2026 08:00')).toMatch(/not an ISO 8601 date-time/);
  });
});

describe('offsets and labels', () => {
  it('reads and writes fixed offsets', () => {
    expect(parseOffset('+01:00')).toEqual({ ok: true, minutes: 60 });
    expect(parseOffset('-09:30')).toEqual({ ok: true, minutes: -570 });
    expect(parseOffset('Z')).toEqual({ ok: true, minutes: 0 });
    expect(parseOffset('Europe/Paris').ok).toBe(false);
    expect(formatOffset(60)).toBe('+01:00');
    expect(formatOffset(-570)).toBe('-09:30');
  });

  it('shows the clock time of elapsed hours in the clock zone', () => {
    const clock = { originMs: epoch('2026-03-04T08:00+01:00'), zoneMinutes: 60 };
    expect(clockLabel(23.75, clock)).toBe('2026-03-05 07:45 (+01:00)');
    expect(clockLabel(0, { ...clock, zoneMinutes: 0 })).toBe('2026-03-04 07:00 (UTC)');
    // Across the leap day: 2028-02-28 22:00 + 26.5 h = 2028-03-01 00:30.
    expect(clockLabel(26.5, { originMs: epoch('2028-02-28T22:00Z'), zoneMinutes: 0 })).toBe('2028-03-01 00:30 (UTC)');
  });
});
