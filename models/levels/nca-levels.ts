/**
 * The rows of a levels file (as models/levels/observations-csv.ts reads them, the reader every
 * levels file goes through) turned into NCA profiles: times and levels as plain numbers in one
 * unit system, grouped by subject (and compartment, when the file names one), sorted by time.
 *
 * Units: a time column's unit or a level's is converted to the system's (hours, and mg/L, or
 * mmol/L when the file's levels are in moles); a number without a unit is taken to be in it, and
 * a note says so. Date-times count from the earliest date-time in the file or among the extra
 * instants given (the dose time), in hours (models/levels/clock.ts), so a level before the dose
 * is never before the origin. Every bad row is reported as `SOURCE, column NAME: message`.
 */
import { clockLabel, clockOf, looksLikeDateTime, type Clock } from './clock.ts';
import { readInstant, type InstantReader } from '../scenario/instants.ts';
import type { ObservationLine } from '../scenario/schema.ts';
import { convertQuantity, unitWritten, type UnitSystem } from '../scenario/units.ts';

/** One level, in the system's units; `source` names its row ("levels.csv line 7"). */
export interface NcaLevel {
  time: number;
  /** 0 for a level below the limit given without a value (it is excluded from every figure). */
  concentration: number;
  belowLimit: boolean;
  source: string;
}

export interface NcaLevels {
  /** By group: the subject, and ` / compartment` when the row names one ('' for a file without either). */
  groups: Map<string, NcaLevel[]>;
  units: UnitSystem;
  /** The origin of date-times, or null when the file has none. */
  clock: Clock | null;
  /** The unit the file's time column was written in (null: bare numbers, or only date-times); bare numbers in options are read in it. */
  fileTimeUnit: string | null;
  notes: string[];
}

/** The system of a file of levels: hours, and mg and L, or mmol and L when its levels are in moles. */
export const massUnits: UnitSystem = { amount: 'mg', volume: 'L', time: 'h' };
const moleUnits: UnitSystem = { amount: 'mmol', volume: 'L', time: 'h' };

/** The column each field was read from, for messages (the default header, or the mapped one). */
export type NcaColumns = Record<'time' | 'concentration' | 'limit', string>;

/** The first unit written in a column of the rows, or null. */
function firstUnit(lines: readonly ObservationLine[], pick: (o: ObservationLine) => ObservationLine['concentration'] | ObservationLine['time']): string | null {
  for (const o of lines) {
    const v = pick(o);
    if (v === undefined || (typeof v === 'string' && looksLikeDateTime(v))) continue;
    const u = unitWritten(v);
    if (u !== null) return u;
  }
  return null;
}

/** The levels of the rows, or every problem as a full line. `instants` are other times read by the same clock (a date-time dose time), so the origin is before them too. */
export function ncaLevelsOf(lines: readonly ObservationLine[], columns: NcaColumns, instants: readonly string[] = []): { ok: true; value: NcaLevels } | { ok: false; errors: string[] } {
  const concUnit = firstUnit(lines, (o) => o.concentration ?? o.limit);
  const units = concUnit !== null && !convertQuantity(`1 ${concUnit}`, 'concentration', massUnits).ok && convertQuantity(`1 ${concUnit}`, 'concentration', moleUnits).ok ? moleUnits : massUnits;
  const fileTimeUnit = firstUnit(lines, (o) => o.time);
  const dateTimes = [...lines.map((o) => o.time), ...instants].filter((t): t is string => typeof t === 'string' && looksLikeDateTime(t));
  // The clock's origin is the earliest date-time written (the first-dose rule's reading, over every instant here).
  const { clock, problems: clockProblems } = clockOf(undefined, dateTimes);
  const errors: string[] = clockProblems.map((p) => `clock: ${p.message}`);
  const groups = new Map<string, NcaLevel[]>();
  const seen = new Map<string, string>();
  for (const o of lines) {
    const rowErrors: string[] = [];
    const at = (column: string) => `${o.source ?? 'a row'}, column ${column}`;
    const reader: InstantReader = {
      units,
      fail: (_path, message) => rowErrors.push(`${at(columns.time)}: ${message}`),
      read: (q, dimension) => {
        if (q === undefined) return null;
        const c = convertQuantity(q, dimension, units);
        if (c.ok) return c.value;
        rowErrors.push(`${at(columns.time)}: ${c.message}`);
        return null;
      },
    };
    const time = readInstant(o.time, 'time', clock, reader);
    const level = (q: ObservationLine['concentration'], column: string): number | null => {
      if (q === undefined) return null;
      const c = convertQuantity(q, 'concentration', units);
      if (!c.ok) rowErrors.push(`${at(column)}: ${c.message}`);
      return c.ok ? c.value : null;
    };
    const concentration = level(o.concentration, columns.concentration);
    const limit = level(o.limit, columns.limit);
    const belowLimit = o.belowLimit === true;
    // As a scenario's observations: a level marked below its limit must lie under it (models/scenario/observations.ts).
    if (belowLimit && concentration !== null && limit !== null && concentration >= limit) rowErrors.push(`${at(columns.concentration)}: the level ${concentration} ${unitFor(units)} is not below its limit ${limit} ${unitFor(units)}`);
    const group = `${o.subject ?? ''}${o.subject !== undefined && o.compartment !== undefined ? ' / ' : ''}${o.compartment ?? ''}`;
    if (time !== null) {
      // A profile holds one level per time; the repeat is named against its first row.
      const key = `${group}\u0000${time}`;
      const earlier = seen.get(key);
      if (earlier !== undefined) rowErrors.push(`${at(columns.time)}: ${group ? `subject ${group} ` : 'the file '}has a level at ${time} ${units.time} already (${lineOf(earlier)})`);
      else seen.set(key, o.source ?? '');
    }
    errors.push(...rowErrors);
    if (rowErrors.length > 0 || time === null) continue;
    const list = groups.get(group) ?? [];
    list.push({ time, concentration: concentration ?? 0, belowLimit, source: o.source ?? '' });
    groups.set(group, list);
  }
  if (errors.length > 0) return { ok: false, errors };
  for (const list of groups.values()) list.sort((a, b) => a.time - b.time);
  const notes: string[] = [];
  if (lines.some((o) => typeof o.time === 'number')) notes.push(`times without a unit are read as ${units.time}`);
  if (lines.some((o) => typeof o.concentration === 'number' || typeof o.limit === 'number')) notes.push(`levels without a unit are read as ${unitFor(units)}`);
  if (fileTimeUnit !== null && fileTimeUnit !== units.time) notes.push(`times written in ${fileTimeUnit} are shown in ${units.time}`);
  if (concUnit !== null && concUnit !== unitFor(units)) notes.push(`levels written in ${concUnit} are shown in ${unitFor(units)}`);
  if (clock) notes.push(`date-times count from ${clockLabel(0, clock)}, the earliest given`);
  return { ok: true, value: { groups, units, clock, fileTimeUnit, notes } };
}

function unitFor(units: UnitSystem): string {
  return `${units.amount}/${units.volume}`;
}

/** "line 7" of "levels.csv line 7". */
function lineOf(source: string): string {
  const m = /line \d+$/.exec(source);
  return m ? m[0] : source;
}
