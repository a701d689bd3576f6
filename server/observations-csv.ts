/**
 * A file of measured levels named by a scenario (`"observations": { "file": "levels.csv" }`),
 * read for the command line. The text is parsed by the core (models/levels/observations-csv.ts:
 * our headers, units in brackets, a mapping; every bad row as `FILE line N, column NAME:
 * message`, no row dropped silently), which the page's import uses too; this file only reads
 * the file, checks the mapping as written, and makes the messages safe for a terminal.
 */
import { observationFields, parseObservationsCsv as parseText, type ObservationField, type ObservationsCsv } from '../models/levels/observations-csv.ts';
import type { ObservationMapping } from '../models/scenario/schema.ts';
import { readFileSync } from 'node:fs';
import { readBesideScenario } from './covariate-csv.ts';
import { visibleText } from './terminal-text.ts';

type Field = ObservationField;
const fields = observationFields;

export type { ObservationsCsv };

/**
 * The observations of a CSV text, as the core reads them (models/levels/observations-csv.ts),
 * with every control character of the file name, a cell or a header shown as a visible escape
 * (terminal-text.ts), since the messages go to a terminal. `file` names the file in messages
 * and in each row's `source`. Errors are full lines, `FILE line N, column NAME: message`.
 */
export function parseObservationsCsv(text: string, file: string, mapping: ObservationMapping = {}): ObservationsCsv {
  const parsed = parseText(text, visibleText(file), mapping);
  return parsed.ok ? { ...parsed, notes: parsed.notes.map(visibleText) } : { ok: false, errors: parsed.errors.map(visibleText) };
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
