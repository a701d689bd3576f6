/**
 * Measured levels as CSV text (RFC 4180, split by ../scenario/csv.ts), pure: the command line
 * reads a levels file through it (server/observations-csv.ts) and the page its import. The
 * headers are our own names — `time`, `compartment`, `concentration`, `subject`, `below limit`,
 * `limit`, `label` — any case, each optionally with its unit in brackets (`time [h]`,
 * `concentration [mg/L]`); a mapping names the file's own headers instead
 * (`{ "time": "Sample drawn", "concentration": "Level" }`). A time cell is a number or an
 * ISO 8601 date-time. Each row becomes one entry of the scenario's `observations`, with its
 * `source` ("FILE line N"). Every bad row is reported as `FILE line N, column NAME: message`;
 * no row is dropped silently: an empty line is skipped and counted in a note. Messages hold the
 * user's text as written; the command line makes control characters visible before printing.
 */
import { looksLikeDateTime, parseDateTime } from './clock.ts';
import { isBlankRecord, splitCsv } from '../scenario/csv.ts';
import type { ObservationLine, ObservationMapping } from '../scenario/schema.ts';

export type ObservationField = keyof ObservationMapping;
type Field = ObservationField;

/** Our default header of each field. */
export const defaultHeaders: Record<Field, string> = {
  time: 'time',
  compartment: 'compartment',
  concentration: 'concentration',
  subject: 'subject',
  belowLimit: 'below limit',
  limit: 'limit',
  label: 'label',
};

/** The fields a column can hold, in the order a header is matched against them. */
export const observationFields = Object.keys(defaultHeaders) as Field[];
const fields = observationFields;
const numberPattern = /^[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?$/;
const identifierPattern = /^[A-Za-z][A-Za-z0-9_-]{0,39}$/;
const maxRows = 10_000;

export type ObservationsCsv = { ok: true; observations: ObservationLine[]; notes: string[] } | { ok: false; errors: string[] };

interface Column {
  field: Field;
  index: number;
  /** The header as written, for messages. */
  header: string;
  unit: string | null;
}

function splitHeader(text: string): { name: string; unit: string | null } {
  const m = /^(.*?)\s*\[([^[\]]*)\]\s*$/.exec(text);
  return m ? { name: m[1].trim(), unit: m[2].trim() || null } : { name: text.trim(), unit: null };
}

const same = (a: string, b: string) => a.trim().toLowerCase() === b.trim().toLowerCase();

/** The columns of the header, by field; problems for a missing time or concentration column, a unit where none belongs, a column named twice. */
function readColumns(head: string[], mapping: ObservationMapping, at: string): { columns: Column[]; unread: string[]; errors: string[] } {
  const columns: Column[] = [];
  const errors: string[] = [];
  const unread: string[] = [];
  head.forEach((text, index) => {
    const { name, unit } = splitHeader(text);
    const field = fields.find((f) => same(name, mapping[f] ?? defaultHeaders[f]) || (mapping[f] !== undefined && same(text, mapping[f] as string)));
    if (field === undefined) {
      if (name !== '') unread.push(name);
      return;
    }
    if (columns.some((c) => c.field === field)) errors.push(`${at}, column ${name}: the column appears twice`);
    else if (unit !== null && (field === 'compartment' || field === 'subject' || field === 'belowLimit' || field === 'label')) errors.push(`${at}, column ${name}: this column holds words, not numbers with a unit; remove [${unit}]`);
    else columns.push({ field, index, header: name, unit: field === 'time' && unit === null ? null : unit });
  });
  const headers = head.join(', ');
  for (const needed of ['time', 'concentration'] as Field[]) {
    if (!columns.some((c) => c.field === needed)) {
      const wanted = mapping[needed] ?? defaultHeaders[needed];
      errors.push(`${at}, column ${wanted}: no such column (the headers are ${headers})${mapping[needed] === undefined ? `; name it "${wanted}" or map it, e.g. "mapping": { "${needed}": "your header" }` : ''}`);
    }
  }
  return { columns, unread, errors };
}

/** "yes"/"no" and their usual spellings; an empty cell is no. */
function readYesNo(cell: string): boolean | null {
  const v = cell.trim().toLowerCase();
  if (v === '' || v === 'no' || v === 'false' || v === '0' || v === 'n') return false;
  if (v === 'yes' || v === 'true' || v === '1' || v === 'y') return true;
  return null;
}

/** A number cell with the column's unit: 4.1 → "4.1 mg/L" (or 4.1 without a unit: the scenario's). */
function withUnit(value: string, unit: string | null): number | string {
  return unit === null ? Number(value) : `${value} ${unit}`;
}

/** One data row → one scenario observation, or the problems of its cells. */
function readRow(cells: string[], columns: Column[], at: string, source: string): { observation: ObservationLine } | { errors: string[] } {
  const errors: string[] = [];
  const cell = (f: Field) => {
    const c = columns.find((x) => x.field === f);
    return c === undefined ? { c, v: '' } : { c, v: cells[c.index].trim() };
  };
  const where = (c: Column) => `${at}, column ${c.header}`;
  const o: Partial<ObservationLine> & { source: string } = { source };

  const time = cell('time');
  if (time.c) {
    if (time.v === '') errors.push(`${where(time.c)}: the time is empty`);
    else if (looksLikeDateTime(time.v)) {
      const parsed = parseDateTime(time.v);
      if (!parsed.ok) errors.push(`${where(time.c)}: ${parsed.message}`);
      else if (time.c.unit !== null) errors.push(`${where(time.c)}: a date-time in a column with the unit [${time.c.unit}]; remove the unit or write elapsed times`);
      else o.time = time.v;
    } else if (!numberPattern.test(time.v)) errors.push(`${where(time.c)}: '${time.v}' is neither a number nor an ISO 8601 date-time such as 2026-03-04T08:00`);
    else o.time = withUnit(time.v, time.c.unit);
  }

  const below = cell('belowLimit');
  let belowLimit = false;
  if (below.c) {
    const yes = readYesNo(below.v);
    if (yes === null) errors.push(`${where(below.c)}: '${below.v}' is not yes or no`);
    else belowLimit = yes;
  }
  const limit = cell('limit');
  let limitValue: string | null = null;
  if (limit.c && limit.v !== '') {
    if (!numberPattern.test(limit.v) || !(Number(limit.v) > 0)) errors.push(`${where(limit.c)}: '${limit.v}' is not a positive number`);
    else o.limit = withUnit(limit.v, limit.c.unit);
    limitValue = limit.v;
  }

  const conc = cell('concentration');
  if (conc.c) {
    // A laboratory's "<0.5" is a level below the limit 0.5.
    const lessThan = /^<\s*(.+)$/.exec(conc.v);
    if (lessThan && numberPattern.test(lessThan[1]) && Number(lessThan[1]) > 0) {
      belowLimit = true;
      if (limitValue !== null && Number(limitValue) !== Number(lessThan[1])) errors.push(`${where(conc.c)}: '${conc.v}' disagrees with the limit ${limitValue} in the same row`);
      else if (limitValue === null) o.limit = withUnit(lessThan[1], conc.c.unit);
    } else if (conc.v === '') {
      if (!belowLimit) errors.push(`${where(conc.c)}: the level is empty; give it, or mark the row below the limit`);
    } else if (!numberPattern.test(conc.v)) errors.push(`${where(conc.c)}: '${conc.v}' is not a number${conc.c.unit ? ` (the column is in ${conc.c.unit})` : ''}`);
    else if (Number(conc.v) < 0) errors.push(`${where(conc.c)}: ${conc.v} is negative; a measured level is 0 or more`);
    else o.concentration = withUnit(conc.v, conc.c.unit);
  }
  if (belowLimit) {
    o.belowLimit = true;
    if (o.limit === undefined && !errors.some((e) => e.startsWith(`${at}, column ${limit.c?.header}`))) errors.push(`${at}, column ${limit.c?.header ?? defaultHeaders.limit}: a level below the limit needs the limit${limit.c ? '' : ' (add a "limit" column)'}`);
  }

  const compartment = cell('compartment');
  if (compartment.c && compartment.v !== '') {
    if (!identifierPattern.test(compartment.v)) errors.push(`${where(compartment.c)}: '${compartment.v}' is not a compartment id`);
    else o.compartment = compartment.v;
  }
  const subject = cell('subject');
  // Never cut short: two ids that share their first 80 characters would become one subject.
  if (subject.c && subject.v.length > 80) errors.push(`${where(subject.c)}: the subject id has ${subject.v.length} characters; at most 80`);
  else if (subject.v !== '') o.subject = subject.v;
  const label = cell('label');
  if (label.v !== '') o.label = label.v.slice(0, 120);
  return errors.length > 0 ? { errors } : { observation: o as ObservationLine };
}

/**
 * The observations of a CSV text. `file` names the file in messages and in each row's `source`.
 * Errors are full lines, `FILE line N, column NAME: message`, every one found.
 */
export function parseObservationsCsv(text: string, file: string, mapping: ObservationMapping = {}): ObservationsCsv {
  const shown = file;
  const split = splitCsv(text);
  if (!split.ok) return { ok: false, errors: [`${shown} line ${split.line}: ${split.message}`] };
  const [head, ...body] = split.records;
  if (!head || isBlankRecord(head)) return { ok: false, errors: [`${shown} line 1: the header is missing, e.g. "time [h],concentration [mg/L]"`] };
  const { columns, unread, errors } = readColumns(head.fields, mapping, `${shown} line ${head.line}`);
  if (errors.length > 0) return { ok: false, errors };
  const observations: ObservationLine[] = [];
  let empty = 0;
  for (const record of body) {
    const at = `${shown} line ${record.line}`;
    if (isBlankRecord(record)) {
      empty++;
      continue;
    }
    if (record.fields.length !== head.fields.length) {
      errors.push(`${at}: ${record.fields.length} field${record.fields.length === 1 ? '' : 's'} where the header has ${head.fields.length}`);
      continue;
    }
    const row = readRow(record.fields, columns, at, `${shown} line ${record.line}`);
    if ('errors' in row) errors.push(...row.errors);
    else observations.push(row.observation);
  }
  if (errors.length > 0) return { ok: false, errors };
  if (observations.length === 0) return { ok: false, errors: [`${shown}: the file has a header but no rows`] };
  if (observations.length > maxRows) return { ok: false, errors: [`${shown}: ${observations.length} rows; at most ${maxRows} observations are read`] };
  const notes: string[] = [];
  if (empty > 0) notes.push(`${shown}: ${empty} empty line${empty === 1 ? '' : 's'} skipped`);
  if (unread.length > 0) notes.push(`${shown}: column${unread.length === 1 ? '' : 's'} not read: ${unread.join(', ')}`);
  return { ok: true, observations, notes };
}

/**
 * What the page offers for a mapping: the header names of a CSV text (units in brackets left
 * off, as a mapping names them) and which of the needed fields (time, concentration) no column
 * holds under the given mapping. Null when the text has no header to read.
 */
export function observationsCsvColumns(text: string, mapping: ObservationMapping = {}): { headers: string[]; missing: ObservationField[] } | null {
  const split = splitCsv(text);
  if (!split.ok) return null;
  const head = split.records[0];
  if (!head || isBlankRecord(head)) return null;
  const { columns } = readColumns(head.fields, mapping, '');
  const headers = head.fields.map((f) => splitHeader(f).name).filter((n) => n !== '');
  const missing = (['time', 'concentration'] as const).filter((f) => !columns.some((c) => c.field === f));
  return { headers, missing };
}
