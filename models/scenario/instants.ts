/**
 * Instants of a scenario (a dose's `at` and `through`, output.start/end/times, an observation's
 * time): a quantity as before, or an ISO 8601 date-time counted from the clock origin. The origin
 * is clock.origin, else the earliest dose date-time (the first-dose rule). Durations are never
 * date-times.
 */
import { clockOf, hoursFromOrigin, isoDateTime, looksLikeDateTime, parseDateTime, type Clock } from '../levels/clock.ts';
import { formatNumber } from '../result/format-number.ts';
import type { Instant, Scenario } from './schema.ts';
import { convertQuantity, type Dimension, type UnitSystem } from './units.ts';

/** What reading instants needs of the normaliser's reader. */
export interface InstantReader {
  readonly units: UnitSystem;
  fail(path: string, message: string): void;
  read(q: Instant | undefined, dimension: Dimension, path: string, range: 'any'): number | null;
}

/** The scenario's clock, or null when it has none (no clock and no dose date-time); problems at clock.* are reported. */
export function readClock(s: Scenario, r: InstantReader): Clock | null {
  const { clock, problems } = clockOf(s.clock, s.doses.map((d) => d.at));
  for (const p of problems) r.fail(`clock.${p.field}`, p.message);
  return clock;
}

/** Scenario time units per hour ("1 h" read in the scenario's time unit): 1 for hours, 60 for minutes. */
export function unitsPerHour(units: UnitSystem): number {
  const hour = convertQuantity('1 h', 'time', units);
  return hour.ok ? hour.value : 1;
}

/** An instant in the scenario's time unit: a quantity as it always was, a date-time as elapsed time from the origin. */
export function readInstant(q: Instant | undefined, path: string, clock: Clock | null, r: InstantReader): number | null {
  if (typeof q !== 'string' || !looksLikeDateTime(q)) return r.read(q, 'time', path, 'any');
  if (clock === null) {
    r.fail(path, 'is a date-time, but the scenario has no clock origin to count it from: add `clock.origin` (e.g. "2026-03-04T08:00") or give a dose its `at` as a date-time');
    return null;
  }
  const at = parseDateTime(q, clock.zoneMinutes);
  if (!at.ok) {
    r.fail(path, at.message);
    return null;
  }
  const hours = hoursFromOrigin(at.value.epochMs, clock);
  if (hours < 0) {
    r.fail(path, `is ${formatNumber(-hours)} h before the clock origin ${isoDateTime(clock.originMs, clock.zoneMinutes)}${clock.originFrom === 'first dose' ? ' (the earliest dose date-time)' : ''}`);
    return null;
  }
  // Hours convert exactly when the time unit is the hour (factor 1).
  const perHour = unitsPerHour(r.units);
  return perHour === 1 ? hours : hours * perHour;
}

/** A duration written as a date-time is a mistake worth naming; true when `q` is one (the problem is recorded). */
export function refuseDateTime(q: unknown, path: string, r: Pick<InstantReader, 'fail'>): boolean {
  if (typeof q !== 'string' || !looksLikeDateTime(q)) return false;
  r.fail(path, `must be a duration, not a date-time ('${q.trim()}'); write e.g. "12 h"`);
  return true;
}
