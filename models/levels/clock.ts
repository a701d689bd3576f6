/**
 * Clock times: ISO 8601 date-times (extended format, a calendar date and a time of day to the
 * minute or second, with an optional UTC offset) read strictly and turned into elapsed time
 * from an origin. Offsets are fixed: no named zones and no daylight-saving rules, so elapsed
 * time is plain arithmetic on UTC milliseconds (Date.UTC, proleptic Gregorian calendar).
 */

/** A date-time read: milliseconds since 1970-01-01T00:00Z, and the offset it was written with (minutes east of UTC, null when none). */
export interface DateTime {
  epochMs: number;
  offsetMinutes: number | null;
}

/** The scenario's clock: where elapsed time 0 sits, and the offset clock times are shown in. */
export interface Clock {
  /** The origin, in milliseconds since 1970-01-01T00:00Z. */
  originMs: number;
  /** Minutes east of UTC for date-times written without an offset and for showing clock times. */
  zoneMinutes: number;
  /** True when the scenario gave the zone; false when UTC was taken by default. */
  zoneGiven: boolean;
  /** How the origin was chosen: `clock.origin`, or the earliest dose date-time. */
  originFrom: 'clock.origin' | 'first dose';
}

const dateTimePattern = /^(\d{4})-(\d{2})-(\d{2})T(\d{2}):(\d{2})(?::(\d{2})(\.\d{1,3})?)?(Z|[+-]\d{2}:\d{2})?$/;
const offsetPattern = /^(?:Z|UTC|([+-])(\d{2}):(\d{2}))$/;

/** True when a text is meant as a date-time (it opens with a calendar date), so a malformed one is reported as such rather than as a bad quantity. */
export function looksLikeDateTime(text: string): boolean {
  return /^\s*\d{4}-\d{1,2}-\d{1,2}/.test(text);
}

/** Days in a month of the Gregorian calendar (leap years: divisible by 4, not by 100 unless by 400). */
function daysInMonth(year: number, month: number): number {
  if (month === 2) return year % 4 === 0 && (year % 100 !== 0 || year % 400 === 0) ? 29 : 28;
  return [4, 6, 9, 11].includes(month) ? 30 : 31;
}

/** An offset written `Z`, `UTC` or `±hh:mm`, in minutes east of UTC; at most 14 hours either way (the widest in use). */
export function parseOffset(text: string): { ok: true; minutes: number } | { ok: false; message: string } {
  const m = offsetPattern.exec(text.trim());
  if (!m) return { ok: false, message: `'${text}' is not a UTC offset; write Z or one such as +01:00 or -05:00 (named zones are not read: their offsets change with daylight saving)` };
  if (m[1] === undefined) return { ok: true, minutes: 0 };
  const hours = Number(m[2]);
  const minutes = Number(m[3]);
  if (minutes > 59 || hours * 60 + minutes > 14 * 60) return { ok: false, message: `'${text}' is not a UTC offset: offsets run from -14:00 to +14:00` };
  return { ok: true, minutes: (m[1] === '-' ? -1 : 1) * (hours * 60 + minutes) };
}

/** Reads an ISO 8601 date-time such as 2026-03-04T08:00, 2026-03-04T08:00:30Z or 2026-03-04T08:00+01:00; `zoneMinutes` applies when no offset is written. */
export function parseDateTime(text: string, zoneMinutes = 0): { ok: true; value: DateTime } | { ok: false; message: string } {
  const typed = text.trim();
  const shown = `'${typed}'`;
  if (/^\d{4}-\d{2}-\d{2}$/.test(typed)) return { ok: false, message: `${shown} is a date without a time of day; write the time too, e.g. ${typed}T08:00` };
  if (/^\d{4}-\d{2}-\d{2} \d/.test(typed)) return { ok: false, message: `${shown} is not an ISO 8601 date-time: put a T between the date and the time, e.g. ${typed.replace(' ', 'T')}` };
  const m = dateTimePattern.exec(typed);
  if (!m) return { ok: false, message: `${shown} is not an ISO 8601 date-time; write e.g. 2026-03-04T08:00, 2026-03-04T08:00:30 or 2026-03-04T08:00+01:00` };
  const [year, month, day, hour, minute] = [1, 2, 3, 4, 5].map((k) => Number(m[k]));
  const second = m[6] === undefined ? 0 : Number(m[6]);
  const millis = m[7] === undefined ? 0 : Math.round(Number(m[7]) * 1000);
  // Date.UTC reads years 0–99 as 1900–1999; no clinical record needs a year before 1900.
  if (year < 1900) return { ok: false, message: `${shown}: the year must be 1900 or later` };
  if (month < 1 || month > 12) return { ok: false, message: `${shown}: there is no month ${month}` };
  if (day < 1 || day > daysInMonth(year, month)) return { ok: false, message: `${shown}: ${year}-${m[2]} has no day ${day}` };
  if (hour > 23) return { ok: false, message: `${shown}: the hour must be 00 to 23` };
  if (minute > 59) return { ok: false, message: `${shown}: the minute must be 00 to 59` };
  if (second > 59) return { ok: false, message: `${shown}: the second must be 00 to 59` };
  let offsetMinutes: number | null = null;
  if (m[8] !== undefined) {
    const offset = parseOffset(m[8]);
    if (!offset.ok) return { ok: false, message: `${shown}: ${offset.message}` };
    offsetMinutes = offset.minutes;
  }
  // Date.UTC counts the wall-clock time as if it were UTC; the offset is then taken off.
  const wall = Date.UTC(year, month - 1, day, hour, minute, second, millis);
  return { ok: true, value: { epochMs: wall - (offsetMinutes ?? zoneMinutes) * 60_000, offsetMinutes } };
}

/**
 * The clock of a scenario's settings: the zone (UTC unless given), and the origin — `origin`
 * when given, else the earliest dose given at a date-time (the first-dose rule) — or null
 * when there is neither. Problems are named by the field (`zone`, `origin`) for the caller to
 * place; a malformed dose date-time is left to whoever reads that dose.
 */
export function clockOf(settings: { origin?: string; zone?: string } | undefined, doseTimes: readonly unknown[]): { clock: Clock | null; problems: { field: 'zone' | 'origin'; message: string }[] } {
  const problems: { field: 'zone' | 'origin'; message: string }[] = [];
  let zoneMinutes = 0;
  if (settings?.zone !== undefined) {
    const zone = parseOffset(settings.zone);
    if (!zone.ok) problems.push({ field: 'zone', message: zone.message });
    else zoneMinutes = zone.minutes;
  }
  const zoneGiven = settings?.zone !== undefined;
  if (settings?.origin !== undefined) {
    const origin = parseDateTime(settings.origin, zoneMinutes);
    if (!origin.ok) return { clock: null, problems: [...problems, { field: 'origin', message: origin.message }] };
    return { clock: { originMs: origin.value.epochMs, zoneMinutes, zoneGiven, originFrom: 'clock.origin' }, problems };
  }
  let first: number | null = null;
  for (const at of doseTimes) {
    if (typeof at !== 'string' || !looksLikeDateTime(at)) continue;
    const parsed = parseDateTime(at, zoneMinutes);
    if (parsed.ok && (first === null || parsed.value.epochMs < first)) first = parsed.value.epochMs;
  }
  return { clock: first === null ? null : { originMs: first, zoneMinutes, zoneGiven, originFrom: 'first dose' }, problems };
}

/** Hours from the origin to a date-time (negative before it). */
export function hoursFromOrigin(epochMs: number, clock: Clock): number {
  return (epochMs - clock.originMs) / 3_600_000;
}

/** `+01:00`, `-05:30`, or `Z` for UTC. */
export function formatOffset(minutes: number): string {
  if (minutes === 0) return 'Z';
  const sign = minutes < 0 ? '-' : '+';
  const a = Math.abs(minutes);
  return `${sign}${pad(Math.floor(a / 60))}:${pad(a % 60)}`;
}

function pad(n: number): string {
  return String(n).padStart(2, '0');
}

/** The wall-clock fields of an instant in a fixed offset, rounded to the second. */
function wallClock(epochMs: number, zoneMinutes: number): { date: string; time: string } {
  const d = new Date(Math.round((epochMs + zoneMinutes * 60_000) / 1000) * 1000);
  const date = `${d.getUTCFullYear()}-${pad(d.getUTCMonth() + 1)}-${pad(d.getUTCDate())}`;
  const seconds = d.getUTCSeconds();
  const time = `${pad(d.getUTCHours())}:${pad(d.getUTCMinutes())}${seconds === 0 ? '' : `:${pad(seconds)}`}`;
  return { date, time };
}

/** An instant as an ISO 8601 date-time in the clock's zone, e.g. 2026-03-04T08:00+01:00. */
export function isoDateTime(epochMs: number, zoneMinutes: number): string {
  const { date, time } = wallClock(epochMs, zoneMinutes);
  return `${date}T${time}${formatOffset(zoneMinutes)}`;
}

/** The clock time `hours` after the origin, for showing beside elapsed hours: `2026-03-05 07:45 (+01:00)`. */
export function clockLabel(hours: number, clock: Pick<Clock, 'originMs' | 'zoneMinutes'>): string {
  const { date, time } = wallClock(clock.originMs + hours * 3_600_000, clock.zoneMinutes);
  return `${date} ${time} (${clock.zoneMinutes === 0 ? 'UTC' : formatOffset(clock.zoneMinutes)})`;
}
