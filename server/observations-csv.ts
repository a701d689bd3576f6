/**
 * Measured levels as a CSV file (RFC 4180, read by splitCsv of covariate-csv.ts). The headers are
 * our own names — `time`, `compartment`, `concentration`, `subject`, `below limit`, `limit`,
 * `label` — any case, each optionally with its unit in brackets (`time [h]`,
 * `concentration [mg/L]`); a mapping names the file's own headers instead
 * (`{ "time": "Sample drawn", "concentration": "Level" }`). A time cell is a number or an
 * ISO 8601 date-time. Each row becomes one entry of the scenario's `observations`, with its
 * `source` ("FILE line N"). Every bad row is reported as `FILE line N, column NAME: message`;
 * no row is dropped silently: an empty line is skipped and counted in a note.
 */
import { looksLikeDateTime, parseDateTime } from '../models/levels/clock.ts';
import type { ObservationLine, ObservationMapping } from '../models/scenario/schema.ts';
import { readFileSync } from 'node:fs';
import { readBesideScenario, splitCsv } from './covariate-csv.ts';
import { visibleText } from './terminal-text.ts';

type Field = keyof ObservationMapping;

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

const fields = Object.keys(defaultHeaders) as Field[];
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
    const shown = visibleText(name);
    if (columns.some((c) => c.field === field)) errors.push(`${at}, column ${shown}: the column appears twice`);
    else if (unit !== null && (field === 'compartment' || field === 'subject' || field === 'belowLimit' || field === 'label')) errors.push(`${at}, column ${shown}: this column holds words, not numbers with a unit; remove [${visibleText(unit)}]`);
    else columns.push({ field, index, header: shown, unit: field === 'time' && unit === null ? null : unit });
  });
  const headers = head.map((h) => visibleText(h)).join(', ');
  for (const needed of ['time', 'concentration'] as Field[]) {
    if (!columns.some((c) => c.field === needed)) {
      const wanted = mapping[needed] ?? defaultHeaders[needed];
      errors.push(`${at}, column ${visibleText(wanted)}: no such column (the headers are ${headers})${mapping[needed] === undefined ? `; name it "${wanted}" or map it, e.g. "mapping": { "${needed}": "your header" }` : ''}`);
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
      if (!parsed.ok) errors.push(`${where(time.c)}: ${visibleText(parsed.message)}`);
      else if (time.c.unit !== null) errors.push(`${where(time.c)}: a date-time in a column with the unit [${visibleText(time.c.unit)}]; remove the unit or write elapsed times`);
      else o.time = time.v;
    } else if (!numberPattern.test(time.v)) errors.push(`${where(time.c)}: '${visibleText(time.v)}' is neither a number nor an ISO 8601 date-time such as 2026-03-04T08:00`);
    else o.time = withUnit(time.v, time.c.unit);
  }

  const below = cell('belowLimit');
  let belowLimit = false;
  if (below.c) {
    const yes = readYesNo(below.v);
    if (yes === null) errors.push(`${where(below.c)}: '${visibleText(below.v)}' is not yes or no`);
    else belowLimit = yes;
  }
  const limit = cell('limit');
  let limitValue: string | null = null;
  if (limit.c && limit.v !== '') {
    if (!numberPattern.test(limit.v) || !(Number(limit.v) > 0)) errors.push(`${where(limit.c)}: '${visibleText(limit.v)}' is not a positive number`);
    else o.limit = withUnit(limit.v, limit.c.unit);
    limitValue = limit.v;
  }

  const conc = cell('concentration');
  if (conc.c) {
    // A laboratory's "<0.5" is a level below the limit 0.5.
    const lessThan = /^<\s*(.+)$/.exec(conc.v);
    if (lessThan && numberPattern.test(lessThan[1]) && Number(lessThan[1]) > 0) {
      belowLimit = true;
      if (limitValue !== null && Number(limitValue) !== Number(lessThan[1])) errors.push(`${where(conc.c)}: '${visibleText(conc.v)}' disagrees with the limit ${visibleText(limitValue)} in the same row`);
      else if (limitValue === null) o.limit = withUnit(lessThan[1], conc.c.unit);
    } else if (conc.v === '') {
      if (!belowLimit) errors.push(`${where(conc.c)}: the level is empty; give it, or mark the row below the limit`);
    } else if (!numberPattern.test(conc.v)) errors.push(`${where(conc.c)}: '${visibleText(conc.v)}' is not a number${conc.c.unit ? ` (the column is in ${visibleText(conc.c.unit)})` : ''}`);
    else if (Number(conc.v) < 0) errors.push(`${where(conc.c)}: ${visibleText(conc.v)} is negative; a measured level is 0 or more`);
    else o.concentration = withUnit(conc.v, conc.c.unit);
  }
  if (belowLimit) {
    o.belowLimit = true;
    if (o.limit === undefined && !errors.some((e) => e.startsWith(`${at}, column ${limit.c?.header}`))) errors.push(`${at}, column ${limit.c?.header ?? defaultHeaders.limit}: a level below the limit needs the limit${limit.c ? '' : ' (add a "limit" column)'}`);
  }

  const compartment = cell('compartment');
  if (compartment.c && compartment.v !== '') {
    if (!identifierPattern.test(compartment.v)) errors.push(`${where(compartment.c)}: '${visibleText(compartment.v)}' is not a compartment id`);
    else o.compartment = compartment.v;
  }
  const subject = cell('subject');
  if (subject.v !== '') o.subject = subject.v.slice(0, 80);
  const label = cell('label');
  if (label.v !== '') o.label = label.v.slice(0, 120);
  return errors.length > 0 ? { errors } : { observation: o as ObservationLine };
}

/**
 * The observations of a CSV text. `file` names the file in messages and in each row's `source`.
 * Errors are full lines, `FILE line N, column NAME: message`, every one found.
 */
export function parseObservationsCsv(text: string, file: string, mapping: ObservationMapping = {}): ObservationsCsv {
  const shown = visibleText(file);
  const split = splitCsv(text);
  if (!split.ok) return { ok: false, errors: [`${shown} line ${split.line}: ${split.message}`] };
  const [head, ...body] = split.records;
  if (!head || (head.fields.length === 1 && head.fields[0] === '')) return { ok: false, errors: [`${shown} line 1: the header is missing, e.g. "time [h],concentration [mg/L]"`] };
  const { columns, unread, errors } = readColumns(head.fields, mapping, `${shown} line ${head.line}`);
  if (errors.length > 0) return { ok: false, errors };
  const observations: ObservationLine[] = [];
  let empty = 0;
  for (const record of body) {
    const at = `${shown} line ${record.line}`;
    if (record.fields.length === 1 && record.fields[0] === '' && !record.quoted[0]) {
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
  if (unread.length > 0) notes.push(`${shown}: column${unread.length === 1 ? '' : 's'} not read: ${unread.map(visibleText).join(', ')}`);
  return { ok: true, observations, notes };
}

/**
 * A scenario whose `observations` names a `file`: that CSV, read relative to the scenario file's
 * folder, becomes the list (each row with its source line). Any other scenario is returned as it is.
 * `shownScenario` is the scenario path as the user typed it, for naming the CSV in messages.
 */
export function withObservationsFile(scenario: unknown, scenarioPath: string, shownScenario: string): { ok: true; value: unknown; notes: string[] } | { ok: false; errors: string[] } {
  const given = (scenario as { observations?: unknown } | null)?.observations;
  if (typeof given !== 'object' || given === null || Array.isArray(given) || !('file' in given)) return { ok: true, value: scenario, notes: [] };
  const { file, mapping } = given as { file: unknown; mapping?: unknown };
  // A file name or mapping of the wrong shape is left to the schema, which names it.
  if (typeof file !== 'string' || file === '' || (mapping !== undefined && (typeof mapping !== 'object' || mapping === null))) return { ok: true, value: scenario, notes: [] };
  const extra = Object.keys(given).find((k) => k !== 'file' && k !== 'mapping');
  if (extra !== undefined) return { ok: false, errors: [`${visibleText(shownScenario)}: observations: unknown field '${visibleText(extra)}' beside file (only file and mapping)`] };
  const wrong = Object.entries(mapping ?? {}).find(([k, v]) => !fields.includes(k as Field) || typeof v !== 'string' || v.trim() === '');
  if (wrong) {
    const [k] = wrong;
    return { ok: false, errors: [`${visibleText(shownScenario)}: observations.mapping.${visibleText(k)}: ${fields.includes(k as Field) ? 'must be the header of a column' : `is not a field of an observation (${fields.join(', ')})`}`] };
  }
  const read = readBesideScenario(file, scenarioPath, shownScenario, 'observations.file');
  if (!read.ok) return read;
  const { text, shown } = read;
  const parsed = parseObservationsCsv(text, shown, (mapping ?? {}) as ObservationMapping);
  if (!parsed.ok) return parsed;
  return { ok: true, value: { ...(scenario as object), observations: parsed.observations }, notes: parsed.notes };
}

/**
 * A scenario file for the commands that read measured levels (nca, fit, propose): its JSON with
 * an observations file read in. A file that cannot be read or is not JSON is a usage error
 * (exit 2, as for every command); a bad levels file is the scenario's problem (exit 1).
 */
export function readLevelsScenario(path: string, shown: string): { ok: true; value: unknown; notes: string[] } | { ok: false; code: 1 | 2; message: string } {
  let input: unknown;
  try {
    input = JSON.parse(readFileSync(path, 'utf8'));
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    const why = e instanceof SyntaxError ? ` is not valid JSON: ${e.message}` : code === 'ENOENT' ? ': no such file' : code === 'EISDIR' ? ': it is a folder' : ` cannot be read (${code ?? 'error'})`;
    return { ok: false, code: 2, message: `'${visibleText(shown)}'${why}` };
  }
  const withLevels = withObservationsFile(input, path, shown);
  return withLevels.ok ? { ok: true, value: withLevels.value, notes: withLevels.notes } : { ok: false, code: 1, message: withLevels.errors.join('\n') };
}
