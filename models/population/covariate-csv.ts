/**
 * A covariate table written as CSV text (split by models/scenario/csv.ts). The header names the
 * covariates, each optionally with its unit in brackets: `weight [kg]`, `sex`. A column is
 * numeric when its header gives a unit or its first value is a number; then every value must
 * be a number. A value becomes "64 kg" (numeric with unit), 64 (numeric without) or the word
 * itself (a category). Every bad row is reported as `SOURCE line N, column NAME: message`
 * (`line N, …` for text with no file name, such as text pasted on the page); no row is ever
 * dropped. Pure text: the command line reads the file, the page reads what is pasted or chosen.
 */
import { covariateNameProblem } from '../scenario/covariate-name.ts';
import { isBlankRecord, splitCsv } from '../scenario/csv.ts';

export type CovariateRow = Record<string, number | string>;

const numberPattern = /^[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?$/;

/** The most problems reported at once: enough to fix a whole file, few enough to read. */
const maxErrors = 20;

interface Column {
  name: string;
  unit: string | null;
  numeric: boolean;
}

/**
 * Reads a header field: a name, optionally followed by its unit in brackets. A name that breaks
 * the covariate-name rule is refused naming the character (a "." or "[" would nest the column's
 * JSON path, population.covariateTable.rows[i].name).
 */
export function readCovariateHeader(field: string): { ok: true; name: string; unit: string | null } | { ok: false; message: string } {
  const m = /^(.*?)\s*\[([^[\]]*)\]\s*$/.exec(field);
  const name = (m ? m[1] : field).trim();
  const open = field.indexOf('[');
  if (!m && open > 0 && !field.includes(']') && covariateNameProblem(field.slice(0, open).trim()) === null) {
    return { ok: false, message: `the unit bracket after '${field.slice(0, open).trim()}' is not closed: write "${field.slice(0, open).trim()} [${field.slice(open + 1).trim()}]"` };
  }
  const problem = covariateNameProblem(name);
  if (problem !== null) return { ok: false, message: `${problem}; a unit goes in brackets after the name, e.g. "weight [kg]"` };
  const unit = m ? m[2].trim() : null;
  if (unit === '') return { ok: false, message: `the brackets after '${name}' hold no unit` };
  return { ok: true, name, unit };
}

/** Whether a CSV value reads as a number (a numeric column's values must). */
export function isCsvNumber(value: string): boolean {
  return numberPattern.test(value);
}

/**
 * The rows of a covariate CSV text. `source` names the file in messages ('' for text without
 * one). Errors are full lines, every one found (up to 20), so a whole file is fixed at once. The
 * messages quote the text as it is: a caller printing to a terminal escapes control characters.
 */
export function parseCovariateCsv(text: string, source: string): { ok: true; rows: CovariateRow[] } | { ok: false; errors: string[] } {
  const lineAt = (n: number) => (source === '' ? `line ${n}` : `${source} line ${n}`);
  const split = splitCsv(text);
  if (!split.ok) return { ok: false, errors: [`${lineAt(split.line)}: ${split.message}`] };
  const [head, ...body] = split.records;
  if (!head || isBlankRecord(head)) return { ok: false, errors: [`${lineAt(1)}: the header is missing: the covariate names, e.g. "weight [kg],sex"`] };
  const errors: string[] = [];
  const columns: Column[] = [];
  head.fields.forEach((f, k) => {
    const h = readCovariateHeader(f);
    if (!h.ok) errors.push(`${lineAt(head.line)}, column ${k + 1}: ${h.message}`);
    else if (columns.some((c) => c.name === h.name)) errors.push(`${lineAt(head.line)}, column ${h.name}: the name appears twice`);
    else columns.push({ name: h.name, unit: h.unit, numeric: h.unit !== null });
  });
  if (errors.length > 0) return { ok: false, errors };
  if (body.length === 0) return { ok: false, errors: [`${source === '' ? 'the text' : `${source}: the file`} has a header but no rows`] };
  // A column without a unit is numeric when its first value is a number.
  const first = body[0];
  columns.forEach((c, k) => {
    if (!c.numeric && first.fields.length === columns.length && numberPattern.test(first.fields[k])) c.numeric = true;
  });
  const rows: CovariateRow[] = [];
  for (const record of body) {
    const at = lineAt(record.line);
    if (record.fields.length !== columns.length) {
      const what = isBlankRecord(record) ? 'an empty line' : `${record.fields.length} field${record.fields.length === 1 ? '' : 's'}`;
      errors.push(`${at}: ${what} where the header has ${columns.length} (${columns.map((c) => c.name).join(', ')})`);
    } else {
      const row: CovariateRow = {};
      columns.forEach((c, k) => {
        const value = record.fields[k];
        const where = `${at}, column ${c.name}`;
        if (value === '') errors.push(`${where}: the value is empty; every subject row needs every covariate`);
        else if (c.numeric) {
          if (!numberPattern.test(value)) errors.push(`${where}: '${value}' is not a number${c.unit ? ` (the column is in ${c.unit})` : ' (the column holds numbers)'}`);
          else row[c.name] = c.unit === null ? Number(value) : `${value} ${c.unit}`;
        } else row[c.name] = value;
      });
      rows.push(row);
    }
    if (errors.length >= maxErrors) break;
  }
  return errors.length > 0 ? { ok: false, errors } : { ok: true, rows };
}
