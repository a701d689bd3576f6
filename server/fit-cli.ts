/**
 * `tidemark fit FILE`: the individual's own values of the quantities the scenario's `fit`
 * section names, estimated from its measured levels (wls or map), as text or JSON; `--out`
 * writes the fitted scenario (the estimates written in) as JSON, never over the input. Run by
 * runCli like simulate, since it solves the model many times.
 */
import { fitScenario } from '../models/fitting/fit.ts';
import type { FitResult } from '../models/fitting/result.ts';
import { buildModel, parseScenario } from '../models/scenario/normalize.ts';
import { describeProblems } from '../models/scenario/problems.ts';
import { formatNumber } from '../models/result/format-number.ts';
import { parseOptions } from './cli-options.ts';
import { clockTimeAt } from './report/clock-time.ts';
import { readLevelsScenario } from './observations-csv.ts';
import { sameFile } from './same-file.ts';
import { visibleLines, visibleText } from './terminal-text.ts';
import { fromUserFolder } from './user-folder.ts';

export interface FitCliOutcome {
  code: number;
  stdout: string;
  stderr: string;
  file?: { path: string; text: string };
}

export const fitCaution = 'Individual estimates are model outputs for review by a clinician; they are not dosing advice.';

export const fitUsage = `usage: tidemark fit FILE [options]      (from the repository: npm run -s cli -- fit FILE …)

Estimates the quantities the scenario's \`fit\` section names (e.g. { "estimate": ["CL", "V"] })
from its measured levels: weighted least squares (wls) or maximum a posteriori with the
population's cv and residual error as the prior (map).

options:
  --objective O    wls or map (default: fit.objective, else map when every estimated quantity
                   has a cv and population.residual is given)
  --format F       text (default) or json
  --out FILE       write the fitted scenario (the estimates written in as typical values) as JSON;
                   never over the input file

${fitCaution}`;

function usageError(message: string): FitCliOutcome {
  return { code: 2, stdout: '', stderr: `${visibleText(message)}\n\n${fitUsage}\n` };
}

export function runFitCli(args: string[], context: { folder: string }): FitCliOutcome {
  if (args.includes('--help') || args.includes('-h')) return { code: 0, stdout: fitUsage + '\n', stderr: '' };
  const parsed = parseOptions(args);
  if (parsed.error) return usageError(parsed.error);
  const unknown = [...parsed.options.keys()].find((k) => !['objective', 'format', 'out', 'time-limit'].includes(k));
  if (unknown !== undefined) return usageError(`unknown option --${unknown}`);
  if (parsed.positional.length !== 1) return usageError(parsed.positional.length === 0 ? 'a scenario FILE is required' : `unexpected argument '${parsed.positional[1]}'`);
  const format = parsed.options.get('format') ?? 'text';
  if (format !== 'text' && format !== 'json') return usageError(`--format must be text or json, not '${format}'`);
  const objective = parsed.options.get('objective');
  if (objective !== undefined && objective !== 'wls' && objective !== 'map') return usageError(`--objective must be wls or map, not '${objective}'`);
  const shown = parsed.positional[0];
  const path = fromUserFolder(context.folder, shown);
  const outGiven = parsed.options.get('out');
  const out = outGiven === undefined ? undefined : fromUserFolder(context.folder, outGiven);
  if (out !== undefined && sameFile(out, path)) return usageError(`refusing to write the fitted scenario to '${outGiven}': it is the scenario file '${shown}' itself`);
  const withLevels = readLevelsScenario(path, shown);
  if (!withLevels.ok) return { code: withLevels.code, stdout: '', stderr: visibleLines(withLevels.message) + '\n' };
  const result = fitScenario(withLevels.value, { objective });
  if (!result.ok) {
    const list = result.problems.map((p) => ({ path: visibleText(p.path), message: visibleText(p.message) }));
    return { code: 1, stdout: '', stderr: `${visibleText(shown)}: ${list.length} problem${list.length > 1 ? 's' : ''}:\n${describeProblems(list)}\n` };
  }
  const r = result.value;
  const stdout = format === 'json' ? JSON.stringify({ ...r, caution: fitCaution }, null, 2) + '\n' : visibleLines(fitText(r, fitClock(withLevels.value)));
  const file = out ? { path: out, text: JSON.stringify(r.fittedScenario, null, 2) + '\n' } : undefined;
  const written = out ? `The fitted scenario goes to ${visibleText(out)}.\n` : '';
  return { code: 0, stdout: format === 'text' ? stdout + written : stdout, stderr: format === 'json' ? written : '', ...(file ? { file } : {}) };
}

/** The clock time of an elapsed time in the scenario's time unit, or null (no clock). */
export type FitClock = (t: number) => string | null;

/** Clock times for the levels' table, by the scenario's clock (the report's rule, clockTimeAt); none without one. */
function fitClock(scenario: unknown): FitClock {
  const parsed = parseScenario(scenario);
  const built = parsed.ok ? buildModel(parsed.value) : null;
  const model = built?.ok ? built.value : null;
  return (t) => (model ? clockTimeAt(t, model) : null);
}

function short(v: number | null): string {
  return v === null || !Number.isFinite(v) ? '–' : formatNumber(Number(v.toPrecision(4)));
}

function table(rows: string[][]): string {
  const widths = rows[0].map((_, c) => Math.max(...rows.map((r) => r[c].length)));
  return rows.map((r) => r.map((cell, c) => (c === 0 ? cell.padEnd(widths[c]) : cell.padStart(widths[c]))).join('  ').trimEnd()).join('\n');
}

/** The fit as text; `clockAt` puts each level's clock time beside its elapsed time when the scenario has a clock. */
export function fitText(r: FitResult, clockAt: FitClock = () => null): string {
  const how = r.settings.objective === 'map' ? 'maximum a posteriori (prior: the population)' : `weighted least squares (weights ${r.settings.weighting})`;
  const lines: string[] = [`Fit by ${how}`, ''];
  lines.push(table([
    ['quantity', 'estimate', 'unit', 'SE', 'RSE %', 'typical'],
    ...Object.entries(r.estimates).map(([name, e]) => [name, short(e.value), e.unit, short(e.standardError), e.relativeStandardError === null ? '–' : (100 * e.relativeStandardError).toFixed(1), short(e.typical)]),
  ]));
  if (r.correlation) {
    lines.push('', 'Correlations of the estimates');
    lines.push(table([['', ...r.correlation.names], ...r.correlation.names.map((n, i) => [n, ...r.correlation!.matrix[i].map((v) => v.toFixed(3))])]));
  }
  lines.push('', `Objective (sum of squares${r.settings.objective === 'map' ? ', prior included' : ''}): ${short(r.objective)}`, r.message);
  lines.push('', `Levels (${r.units.concentration}, time in ${r.units.time})`);
  const clocked = r.predictions.some((p) => clockAt(p.time) !== null);
  lines.push(table([
    ['level', 'time', ...(clocked ? ['clock time'] : []), 'observed', 'predicted', 'residual', 'weighted'],
    ...r.predictions.map((p) => [p.label ? `${p.path} ${p.label}` : p.path, short(p.time), ...(clocked ? [clockAt(p.time) ?? '–'] : []), p.censored ? `< ${short(p.limit)} (censored)` : p.used ? short(p.observed) : 'below limit', short(p.predicted), short(p.residual), short(p.weightedResidual)]),
  ]));
  if (r.notes.length > 0) lines.push('', ...r.notes.map((n) => `Note: ${n}`));
  lines.push('', fitCaution, '');
  return lines.join('\n');
}
