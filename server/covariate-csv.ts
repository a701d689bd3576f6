/**
 * A covariate table as a CSV file named by a scenario, read relative to the scenario file. The
 * text is read by models/population/covariate-csv.ts (the page reads pasted text with the same
 * rules); here the file is read and its messages made safe for a terminal. Every bad row is
 * reported as `FILE line N, column NAME: message`; no row is ever dropped.
 */
import { readFileSync } from 'node:fs';
import { dirname, join, isAbsolute } from 'node:path';
import { splitCsv } from '../models/scenario/csv.ts';
import { parseCovariateCsv as parseCovariateText, type CovariateRow } from '../models/population/covariate-csv.ts';
import { tableRowProblems } from '../models/population/covariates.ts';
import type { Subject } from '../models/scenario/schema.ts';
import { visibleText } from './terminal-text.ts';

export type { CovariateRow };

// The RFC 4180 splitter lives in the core (the page reads levels files with it too).
export { splitCsv };

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

/**
 * The rows of a covariate CSV text. `file` names the file in messages. Errors are full lines
 * `FILE line N, column NAME: message`, every one found (up to 20), with control characters shown
 * as escapes (a file name or a value could hold one).
 */
export function parseCovariateCsv(text: string, file: string): { ok: true; rows: CovariateRow[] } | { ok: false; errors: string[] } {
  const read = parseCovariateText(text, file);
  return read.ok ? read : { ok: false, errors: read.errors.map(visibleText) };
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
  const cells = cellProblems(text, parsed.rows, drawnNames(population), shown);
  if (cells.length > 0) return { ok: false, errors: cells };
  const s = scenario as { population: Record<string, unknown> };
  return { ok: true, value: { ...s, population: { ...s.population, covariateTable: { ...rest, rows: parsed.rows } } } };
}

/** The names population.covariates draws (as written; the schema checks the rest). */
function drawnNames(population: unknown): Set<string> {
  const drawn = (population as { covariates?: unknown }).covariates;
  return new Set(typeof drawn === 'object' && drawn !== null && !Array.isArray(drawn) ? Object.keys(drawn) : []);
}

/**
 * The table's cells checked as the population reads its rows (tableRowProblems: a sex outside
 * the categories, a weight that is not positive …), each named by the file's line and column
 * rather than by `population.covariateTable.rows[i].name`, which the user never wrote. A column
 * that is also drawn is named once, on the header line. Row i is the (i + 1)th record after the
 * header: a table that parsed has no blank or short record in between, and a record starts on
 * the line splitCsv gives (a quoted field may span lines).
 */
export function cellProblems(text: string, rows: readonly CovariateRow[], drawn: ReadonlySet<string>, shown: string): string[] {
  const split = splitCsv(text);
  if (!split.ok || split.records.length !== rows.length + 1) return []; // not a text parseCovariateCsv accepted
  const [head, ...body] = split.records;
  const file = visibleText(shown);
  const errors = Object.keys(rows[0] ?? {})
    .filter((name) => drawn.has(name))
    .map((name) => `${file} line ${head.line}, column ${visibleText(name)}: '${visibleText(name)}' is also drawn from population.covariates.${visibleText(name)}; give it in one place`);
  for (const p of tableRowProblems(rows as Subject[], new Set())) {
    const at = /^population\.covariateTable\.rows\[(\d+)\]\.(.+)$/.exec(p.path);
    errors.push(at ? `${file} line ${body[Number(at[1])].line}, column ${visibleText(at[2])}: ${visibleText(p.message)}` : visibleText(`${shown}: ${p.path}: ${p.message}`));
  }
  return errors;
}
