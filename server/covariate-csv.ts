/**
 * A covariate table as a CSV file (RFC 4180: comma-separated, fields optionally in double
 * quotes, a doubled quote inside quotes stands for one, CRLF or LF line ends). The header names
 * the covariates, each optionally with its unit in brackets: `weight [kg]`, `sex`. A column is
 * numeric when its header gives a unit or its first value is a number; then every value must
 * be a number. A value becomes "64 kg" (numeric with unit), 64 (numeric without) or the word
 * itself (a category). Every bad row is reported as `FILE line N, column NAME: message`; no
 * row is ever dropped.
 */
import { readFileSync } from 'node:fs';
import { dirname, join, isAbsolute } from 'node:path';
import { visibleText } from './terminal-text.ts';

/**
 * A file a scenario names (a covariate table, levels), read relative to the scenario file;
 * `shown` is its path as the user would write it, for messages. A file that cannot be read is
 * named with the scenario's field.
 */
export function readBesideScenario(file: string, scenarioPath: string, shownScenario: string, field: string): { ok: true; text: string; shown: string } | { ok: false; errors: string[] } {
  const path = isAbsolute(file) ? file : join(dirname(scenarioPath), file);
  const shown = isAbsolute(file) ? file : join(dirname(shownScenario), file);
  try {
    return { ok: true, text: readFileSync(path, 'utf8'), shown };
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    return { ok: false, errors: [`${visibleText(shownScenario)}: ${field}: cannot read '${visibleText(shown)}'${code === 'ENOENT' ? ': no such file' : code ? ` (${code})` : ''}`] };
  }
}

export type CovariateRow = Record<string, number | string>;

/** One record of the file: its fields and the line it starts on (1-based). */
interface Record_ {
  fields: string[];
  quoted: boolean[];
  line: number;
}

/** Splits CSV text into records (RFC 4180 §2), or the first quoting error with its line. */
export function splitCsv(text: string): { ok: true; records: Record_[] } | { ok: false; line: number; message: string } {
  const records: Record_[] = [];
  let fields: string[] = [];
  let quoted: boolean[] = [];
  let field = '';
  let isQuoted = false;
  let inQuotes = false;
  let afterQuote = false;
  let line = 1;
  let start = 1;
  const endField = () => {
    fields.push(isQuoted ? field : field.trim());
    quoted.push(isQuoted);
    field = '';
    isQuoted = false;
    afterQuote = false;
  };
  const endRecord = () => {
    endField();
    records.push({ fields, quoted, line: start });
    fields = [];
    quoted = [];
  };
  // A byte-order mark is not part of the first name.
  const body = text.startsWith('\ufeff') ? text.slice(1) : text;
  for (let i = 0; i < body.length; i++) {
    const c = body[i];
    if (inQuotes) {
      if (c === '"') {
        if (body[i + 1] === '"') {
          field += '"';
          i++;
        } else {
          inQuotes = false;
          afterQuote = true;
        }
      } else {
        if (c === '\n') line++;
        field += c;
      }
      continue;
    }
    if (c === ',') endField();
    else if (c === '\n' || c === '\r') {
      if (c === '\r' && body[i + 1] === '\n') i++;
      endRecord();
      line++;
      start = line;
    } else if (c === '"') {
      if (field.trim() !== '' || afterQuote) return { ok: false, line, message: 'a quote inside an unquoted field; put the whole field in quotes and double the quote ("")' };
      field = '';
      isQuoted = true;
      inQuotes = true;
    } else if (afterQuote) {
      if (c !== ' ' && c !== '\t') return { ok: false, line, message: 'text after a closing quote; a quoted field ends at its quote' };
    } else field += c;
  }
  if (inQuotes) return { ok: false, line: start, message: 'a quoted field is never closed' };
  // The last record, unless the text ended with a line break.
  if (field !== '' || isQuoted || fields.length > 0) endRecord();
  // Blank lines at the very end hold no row; elsewhere they are reported.
  while (records.length > 0 && isBlank(records[records.length - 1])) records.pop();
  return { ok: true, records };
}

function isBlank(r: Record_): boolean {
  return r.fields.length === 1 && r.fields[0] === '' && !r.quoted[0];
}

const namePattern = /^[A-Za-z][A-Za-z0-9_]{0,39}$/;
const numberPattern = /^[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?$/;

interface Column {
  name: string;
  unit: string | null;
  numeric: boolean;
}

/** Reads a header field: a name, optionally followed by its unit in brackets. */
function readHeader(field: string): { ok: true; name: string; unit: string | null } | { ok: false; message: string } {
  const m = /^([^[\]]*?)\s*(?:\[([^[\]]*)\])?$/.exec(field);
  const name = m?.[1].trim() ?? '';
  if (!m || !namePattern.test(name)) {
    return { ok: false, message: `'${field}' is not a covariate name (a letter, then letters, digits or "_"), optionally with its unit in brackets, e.g. "weight [kg]"` };
  }
  const unit = m[2] === undefined ? null : m[2].trim();
  if (unit === '') return { ok: false, message: `the brackets after '${name}' hold no unit` };
  return { ok: true, name, unit };
}

/**
 * The rows of a covariate CSV text. `file` names the file in messages. Errors are full lines
 * `FILE line N, column NAME: message`, every one found (up to 20), so a whole file is fixed at once.
 */
export function parseCovariateCsv(text: string, file: string): { ok: true; rows: CovariateRow[] } | { ok: false; errors: string[] } {
  const shown = visibleText(file);
  const split = splitCsv(text);
  if (!split.ok) return { ok: false, errors: [`${shown} line ${split.line}: ${split.message}`] };
  const [head, ...body] = split.records;
  if (!head || isBlank(head)) return { ok: false, errors: [`${shown} line 1: the header is missing: the covariate names, e.g. "weight [kg],sex"`] };
  const errors: string[] = [];
  const columns: Column[] = [];
  head.fields.forEach((f, k) => {
    const h = readHeader(f);
    if (!h.ok) errors.push(`${shown} line ${head.line}, column ${k + 1}: ${visibleText(h.message)}`);
    else if (columns.some((c) => c.name === h.name)) errors.push(`${shown} line ${head.line}, column ${h.name}: the name appears twice`);
    else columns.push({ name: h.name, unit: h.unit, numeric: h.unit !== null });
  });
  if (errors.length > 0) return { ok: false, errors };
  if (body.length === 0) return { ok: false, errors: [`${shown}: the file has a header but no rows`] };
  // A column without a unit is numeric when its first value is a number.
  const first = body[0];
  columns.forEach((c, k) => {
    if (!c.numeric && first.fields.length === columns.length && numberPattern.test(first.fields[k])) c.numeric = true;
  });
  const rows: CovariateRow[] = [];
  for (const record of body) {
    const at = `${shown} line ${record.line}`;
    if (record.fields.length !== columns.length) {
      const what = isBlank(record) ? 'an empty line' : `${record.fields.length} field${record.fields.length === 1 ? '' : 's'}`;
      errors.push(`${at}: ${what} where the header has ${columns.length} (${columns.map((c) => c.name).join(', ')})`);
    } else {
      const row: CovariateRow = {};
      columns.forEach((c, k) => {
        const value = record.fields[k];
        const where = `${at}, column ${c.name}`;
        if (value === '') errors.push(`${where}: the value is empty; every subject row needs every covariate`);
        else if (c.numeric) {
          if (!numberPattern.test(value)) errors.push(`${where}: '${visibleText(value)}' is not a number${c.unit ? ` (the column is in ${visibleText(c.unit)})` : ' (the column holds numbers)'}`);
          else row[c.name] = c.unit === null ? Number(value) : `${value} ${c.unit}`;
        } else row[c.name] = value;
      });
      rows.push(row);
    }
    if (errors.length >= 20) break;
  }
  return errors.length > 0 ? { ok: false, errors } : { ok: true, rows };
}

/**
 * A scenario whose population.covariateTable names a `file`: that CSV, read relative to the
 * scenario file's folder, becomes `rows` (and `file` goes). Any other scenario is returned as it is.
 * `shownScenario` is the scenario path as the user typed it, for naming the CSV in messages.
 */
export function withCovariateFile(scenario: unknown, scenarioPath: string, shownScenario: string): { ok: true; value: unknown } | { ok: false; errors: string[] } {
  const population = (scenario as { population?: unknown } | null)?.population;
  const table = (population as { covariateTable?: unknown } | null | undefined)?.covariateTable;
  if (typeof table !== 'object' || table === null || !('file' in table)) return { ok: true, value: scenario };
  const { file, ...rest } = table as { file: unknown };
  if (typeof file !== 'string' || file === '') return { ok: true, value: scenario }; // the schema names it
  if ('rows' in rest) return { ok: false, errors: [`${visibleText(shownScenario)}: population.covariateTable: give either rows or file, not both`] };
  const read = readBesideScenario(file, scenarioPath, shownScenario, 'population.covariateTable.file');
  if (!read.ok) return read;
  const { text, shown } = read;
  const parsed = parseCovariateCsv(text, shown);
  if (!parsed.ok) return parsed;
  const s = scenario as { population: Record<string, unknown> };
  return { ok: true, value: { ...s, population: { ...s.population, covariateTable: { ...rest, rows: parsed.rows } } } };
}
