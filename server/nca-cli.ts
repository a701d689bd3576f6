/**
 * `tidemark nca FILE`: non-compartmental figures of measured levels in a CSV file, per subject,
 * then summarised over subjects. The file is RFC 4180 CSV (read by covariate-csv.ts's splitCsv)
 * with the header names `subject` (optional), `time`, `concentration`, and optionally `below
 * limit`, `limit`, `compartment`, `label`; a unit may follow a header in brackets
 * (`time [h]`, `concentration [mg/L]`) and then names the figures' units. Every bad row is
 * reported as `FILE line N, column NAME: message` (exit 1); none is dropped. Needs neither the
 * engine nor a worker thread: cli.ts runs it in the main thread.
 */
import { readFileSync } from 'node:fs';
import { checkNcaInput, ncaFigureInfo, ncaFigureNames, ncaLabel, ncaProfile, type NcaDimension, type NcaDose, type NcaFigureName, type NcaResult, type NcaRoute, type NcaRule } from '../models/levels/nca.ts';
import { summariseNca, type NcaFigureSummary, type NcaSummary } from '../models/levels/nca-summary.ts';
import { ncaOfModel, type NcaOptions, type ScenarioNca } from '../models/levels/nca-scenario.ts';
import { terminalPointsFrom } from '../models/levels/terminal-from.ts';
import { buildModel, parseScenario } from '../models/scenario/normalize.ts';
import { describeProblems } from '../models/scenario/problems.ts';
import { readLevelsScenario } from './observations-csv.ts';
import { parseOptions } from './cli-options.ts';
import { splitCsv } from './covariate-csv.ts';
import { visibleLines, visibleText } from './terminal-text.ts';
import { fromUserFolder } from './user-folder.ts';

export interface NcaCliOutcome {
  code: number;
  stdout: string;
  stderr: string;
}

export const ncaUsage = `usage: tidemark nca FILE [options]      (from the repository: npm run -s cli -- nca FILE …)

Non-compartmental figures of measured levels, per subject, then a summary over subjects.
FILE is a scenario (.json) with observations, or a CSV with a header: time, concentration and
optionally subject, below limit, limit, compartment, label; a unit may follow a name in brackets: "time [h]", "concentration [mg/L]".
A row whose "below limit" is yes or true is left out of every figure and named.
A scenario gives its own dose (its first dose line: nominal amount, route by where it goes) and,
when that line repeats, the steady-state interval; its "nca" section may give the rule and fix
terminal lines. Only --rule, --terminal-from and --format apply to a scenario; given, --rule and
--terminal-from override the section (--terminal-from then fixes the line of every profile).

options:
  --dose AMOUNT          the dose, e.g. 500 or "500 mg" (CL, Vz and MRT need it)
  --dose-time T          when it was given, in the file's time unit (default 0)
  --route R              intravascular (bolus), extravascular (default) or infusion
  --duration D           an infusion's length, in the file's time unit (needed for an infusion)
  --interval TAU         the dosing interval at steady state: AUCτ, Cavg, Cmin, Cmax, fluctuation, swing
  --rule R               log-down (linear up, log-linear down; default) or linear
  --terminal-from T      fix the terminal line: the levels at or after time T that come after Cmax
                         (below-limit ones left out) instead of the best adjusted R²; T in the
                         file's time unit, or for a scenario an instant as it writes them
                         ("96 h", or a date-time by its clock); fewer than 3 levels are flagged
  --format F             text (default), json or csv (one row per subject)

NCA figures describe the levels given; they are not dosing advice.`;

const closing = 'NCA figures describe the levels given; they are not dosing advice.';

type ColumnName = 'subject' | 'time' | 'concentration' | 'below limit' | 'limit' | 'compartment' | 'label';
const columnNames: readonly ColumnName[] = ['subject', 'time', 'concentration', 'below limit', 'limit', 'compartment', 'label'];

/** One level as read from a row, with its line for messages. */
interface Level {
  group: string;
  time: number;
  concentration: number;
  belowLimit: boolean;
  line: number;
}

export interface NcaUnits {
  time: string | null;
  concentration: string | null;
  amount: string | null;
}

const numberPattern = /^[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?$/;

/** A header field: a name (case and inner spaces as the user likes), optionally its unit in brackets. */
function readHeader(field: string): { name: string; unit: string | null } | null {
  const m = /^([^[\]]*?)\s*(?:\[([^[\]]*)\])?$/.exec(field.trim());
  if (!m) return null;
  const unit = m[2] === undefined ? null : m[2].trim();
  return { name: m[1].trim().replace(/\s+/g, ' ').toLowerCase(), unit: unit === '' ? null : unit };
}

/** yes/true and no/false (any case), or empty for no. */
function readYesNo(value: string): boolean | null {
  const v = value.toLowerCase();
  if (v === 'yes' || v === 'true') return true;
  if (v === '' || v === 'no' || v === 'false') return false;
  return null;
}

/** The levels of a CSV text grouped by subject (and compartment), or every error as full lines. */
export function parseLevelsCsv(text: string, file: string): { ok: true; groups: Map<string, Level[]>; units: Omit<NcaUnits, 'amount'>; notes: string[] } | { ok: false; errors: string[] } {
  const shown = visibleText(file);
  const split = splitCsv(text);
  if (!split.ok) return { ok: false, errors: [`${shown} line ${split.line}: ${split.message}`] };
  const [head, ...body] = split.records;
  if (!head || (head.fields.length === 1 && head.fields[0] === '')) return { ok: false, errors: [`${shown} line 1: the header is missing: e.g. "subject,time [h],concentration [mg/L]"`] };
  const errors: string[] = [];
  const at = new Map<ColumnName, { index: number; unit: string | null }>();
  head.fields.forEach((f, k) => {
    const h = readHeader(f);
    const name = h?.name as ColumnName | undefined;
    if (!h || !name || !columnNames.includes(name)) errors.push(`${shown} line ${head.line}, column ${k + 1}: '${visibleText(f)}' is not a column nca reads (${columnNames.join(', ')}, each optionally with a unit in brackets)`);
    else if (at.has(name)) errors.push(`${shown} line ${head.line}, column ${name}: the column appears twice`);
    else at.set(name, { index: k, unit: h.unit });
  });
  for (const needed of ['time', 'concentration'] as const) if (!at.has(needed)) errors.push(`${shown} line ${head.line}: the header has no '${needed}' column`);
  if (errors.length > 0) return { ok: false, errors };
  const units = { time: at.get('time')?.unit ?? null, concentration: at.get('concentration')?.unit ?? null };
  const limitUnit = at.get('limit')?.unit ?? null;
  if (limitUnit !== null && limitUnit !== units.concentration) errors.push(`${shown} line ${head.line}, column limit: its unit '${visibleText(limitUnit)}' differs from the concentration's; give both in one unit`);
  const groups = new Map<string, Level[]>();
  let empty = 0;
  const seen = new Map<string, number>();
  for (const record of body) {
    if (record.fields.length === 1 && record.fields[0] === '' && !record.quoted[0]) {
      empty++;
      continue;
    }
    const where = `${shown} line ${record.line}`;
    if (record.fields.length !== head.fields.length) {
      errors.push(`${where}: ${record.fields.length} field${record.fields.length === 1 ? '' : 's'} where the header has ${head.fields.length}`);
      continue;
    }
    const value = (c: ColumnName) => {
      const col = at.get(c);
      return col === undefined ? '' : record.fields[col.index];
    };
    const rowErrors: string[] = [];
    const bad = (c: ColumnName, message: string) => rowErrors.push(`${where}, column ${c}: ${message}`);
    const number = (c: ColumnName, what: string): number | null => {
      const v = value(c);
      if (!numberPattern.test(v)) {
        if (v === '') bad(c, `the ${what} is empty`);
        else if (c === 'time' && /^\d{4}-\d\d-\d\dT/.test(v)) bad(c, `'${visibleText(v)}' is a date-time; nca reads elapsed times as numbers (e.g. hours after the first dose)`);
        else bad(c, `'${visibleText(v)}' is not a number`);
        return null;
      }
      return Number(v);
    };
    const time = number('time', 'time');
    const below = readYesNo(value('below limit'));
    if (below === null) bad('below limit', `'${visibleText(value('below limit'))}' is not yes, no, true, false or empty`);
    let concentration: number | null = null;
    if (below === true && value('concentration') === '') concentration = null;
    else {
      concentration = number('concentration', 'concentration');
      if (concentration !== null && concentration < 0) bad('concentration', `${value('concentration')} is negative; a level cannot be below zero`);
    }
    if (at.has('limit') && value('limit') !== '') {
      const limit = number('limit', 'limit');
      if (limit !== null && limit < 0) bad('limit', `${value('limit')} is negative`);
      if (limit !== null && below === true && concentration !== null && concentration >= limit) bad('below limit', `the level ${concentration} is not below its limit ${limit}`);
    } else if (below === true && at.has('limit')) bad('limit', 'a level below the limit needs its limit');
    const subject = at.has('subject') ? value('subject') : '';
    if (at.has('subject') && subject === '') bad('subject', 'the subject is empty');
    const compartment = value('compartment');
    const group = at.has('compartment') && compartment !== '' ? `${subject}${subject ? ' / ' : ''}${compartment}` : subject;
    if (time !== null) {
      // Checked even when the row has other problems, so a repeated time is named against its first line.
      const key = `${group}\u0000${time}`;
      const earlier = seen.get(key);
      if (earlier !== undefined) bad('time', `${group ? `subject ${visibleText(group)} ` : ''}has a level at ${time} already (line ${earlier})`);
      else seen.set(key, record.line);
    }
    errors.push(...rowErrors);
    if (rowErrors.length > 0 || time === null) continue;
    const list = groups.get(group) ?? [];
    list.push({ group, time, concentration: concentration ?? 0, belowLimit: below === true, line: record.line });
    groups.set(group, list);
  }
  if (errors.length > 0) return { ok: false, errors };
  if (groups.size === 0) return { ok: false, errors: [`${shown}: the file has a header but no levels`] };
  for (const list of groups.values()) list.sort((a, b) => a.time - b.time);
  const notes = empty > 0 ? [`${empty} empty line${empty === 1 ? '' : 's'} skipped`] : [];
  return { ok: true, groups, units, notes };
}

/** A figure's unit in the file's units; a concentration written amount/volume with the dose's amount unit cancels (mg/(mg/L·h) is L/h). */
export function unitOf(dimension: NcaDimension, units: NcaUnits): string {
  const T = units.time ?? 'time';
  const C = units.concentration ?? 'concentration';
  const A = units.amount ?? 'amount';
  const power = (u: string, p: number) => (p === 1 ? u : `${u.includes('/') || u.includes('·') ? `(${u})` : u}${p === 2 ? '²' : `^${p}`}`);
  const { amount, concentration, time } = dimension;
  if (amount === 0 && concentration === 0 && time === -1) return `1/${T}`;
  if (amount === 0) return [concentration > 0 ? power(C, concentration) : '', time > 0 ? power(T, time) : ''].filter(Boolean).join('·');
  // amount/concentration: the volume of the concentration when its amount is the dose's.
  const m = units.concentration === null ? null : /^([^/]+)\/([^/]+)$/.exec(units.concentration);
  const volume = m && units.amount !== null && m[1].trim() === units.amount ? m[2].trim() : null;
  if (time === 0) return volume ?? `${A}/(${C})`;
  return volume ? `${volume}/${T}` : `${A}/(${C}·${T})`;
}

function fmt(v: number | null): string {
  if (v === null) return '—';
  if (v === 0) return '0';
  const a = Math.abs(v);
  return a >= 1e6 || a < 1e-4 ? v.toExponential(3) : String(Number(v.toPrecision(4)));
}

function pad(cells: string[][]): string[] {
  const widths = cells[0].map((_, k) => Math.max(...cells.map((r) => [...r[k]].length)));
  return cells.map((r) => r.map((c, k) => (k === r.length - 1 ? c : c + ' '.repeat(widths[k] - [...c].length))).join('  ').trimEnd());
}

function figureUnit(name: NcaFigureName, units: NcaUnits): string {
  const d = ncaFigureInfo[name].dimension;
  return d === 'percent' ? '%' : d === 'none' ? '' : unitOf(d, units);
}

interface Profiled {
  subject: string;
  result: NcaResult;
}

const ruleWords: Record<NcaRule, string> = { 'linear-up-log-down': 'linear up, log-linear down', linear: 'linear trapezoids' };

/** `fixedWords`: how the user fixed the terminal line ("from 12 h"), when they did. */
function profileText(p: Profiled, units: NcaUnits, route: NcaRoute | null, shownFigures: readonly NcaFigureName[], fixedWords?: string): string {
  const r = p.result;
  const rows = [['figure', 'value', 'unit', 'rule']];
  for (const name of shownFigures) rows.push([ncaLabel(name, route), fmt(r.figures[name]), figureUnit(name, units), ncaFigureInfo[name].rule]);
  const lines = [`subject ${p.subject ? visibleText(p.subject) : '(one profile)'}`, ...pad(rows).map((l) => '  ' + l)];
  if (r.terminal) {
    const t = r.terminal;
    lines.push(`  terminal line: ${t.times.length} levels at ${t.times.map(fmt).join(', ')} (${t.chosenBy === 'fixed' && fixedWords ? `fixed by the user ${fixedWords}` : t.chosenBy}), R² ${t.r2.toFixed(4)}`);
  }
  if (r.flags.length > 0) {
    lines.push('  flags:');
    for (const f of r.flags) lines.push(`    ${f.figure === 'levels' ? 'levels' : ncaLabel(f.figure, route)}: ${f.message}`);
  }
  return lines.join('\n');
}

function summaryText(summary: NcaSummary, units: NcaUnits, route: NcaRoute | null, shownFigures: readonly NcaFigureName[]): string {
  const rows = [['figure', 'n', 'geo. mean', 'geo. CV %', 'mean', 'SD', 'median', 'min', 'max', 'unit']];
  for (const name of shownFigures) {
    const s: NcaFigureSummary | undefined = summary.figures[name];
    if (!s) continue;
    rows.push([ncaLabel(name, route), String(s.n), fmt(s.geometricMean), fmt(s.geometricCv === null ? null : 100 * s.geometricCv), fmt(s.mean), fmt(s.sd), fmt(s.median), fmt(s.min), fmt(s.max), figureUnit(name, units)]);
  }
  return [`summary over ${summary.subjects} subject${summary.subjects === 1 ? '' : 's'} (geometric mean and CV √(exp(s²) − 1) of ln values; Tmax and Tlast by median and range)`, ...pad(rows).map((l) => '  ' + l)].join('\n');
}

function csvField(s: string): string {
  return /[",\n\r]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}

/** Parses one number option; undefined when absent. */
function numberOption(options: Map<string, string>, name: string): { ok: true; value: number | undefined } | { ok: false; message: string } {
  const text = options.get(name);
  if (text === undefined) return { ok: true, value: undefined };
  return numberPattern.test(text.trim()) ? { ok: true, value: Number(text) } : { ok: false, message: `--${name} must be a number, not '${visibleText(text)}'` };
}

export function runNcaCli(args: string[], context: { folder: string }): NcaCliOutcome {
  if (args.includes('--help') || args.includes('-h')) return { code: 0, stdout: ncaUsage + '\n', stderr: '' };
  const usageError = (message: string): NcaCliOutcome => ({ code: 2, stdout: '', stderr: `${message}\n\n${ncaUsage}\n` });
  const parsed = parseOptions(args);
  if (parsed.error) return usageError(visibleText(parsed.error));
  const { options } = parsed;
  const allowed = ['dose', 'dose-time', 'route', 'duration', 'interval', 'rule', 'format', 'terminal-from'];
  const unknown = [...options.keys()].find((k) => !allowed.includes(k));
  if (unknown !== undefined) return usageError(`unknown option --${visibleText(unknown)}`);
  if (parsed.positional.length !== 1) return usageError(parsed.positional.length === 0 ? 'a levels FILE (CSV) is required' : 'give one levels FILE');
  const format = options.get('format') ?? 'text';
  if (!['text', 'json', 'csv'].includes(format)) return usageError(`--format must be text, json or csv, not '${visibleText(format)}'`);
  const ruleText = options.get('rule') ?? 'log-down';
  if (ruleText !== 'log-down' && ruleText !== 'linear') return usageError(`--rule must be log-down or linear, not '${visibleText(ruleText)}'`);
  const rule: NcaRule = ruleText === 'linear' ? 'linear' : 'linear-up-log-down';
  if (/\.json$/i.test(parsed.positional[0])) {
    const doseOption = ['dose', 'dose-time', 'route', 'duration', 'interval'].find((k) => options.has(k));
    if (doseOption !== undefined) return usageError(`--${doseOption} is for a CSV of levels; a scenario's doses give the dose and the interval`);
    const from = options.get('terminal-from');
    if (from !== undefined && from.trim() === '') return usageError('--terminal-from needs a time, e.g. "96 h" or a date-time');
    return runScenarioNca(parsed.positional[0], context.folder, { ...(options.has('rule') ? { rule } : {}), ...(from !== undefined ? { terminalFrom: { from, path: '--terminal-from' } } : {}) }, format as 'text' | 'json' | 'csv');
  }
  const routeText = options.get('route') ?? 'extravascular';
  if (routeText !== 'intravascular' && routeText !== 'extravascular' && routeText !== 'infusion') return usageError(`--route must be intravascular, extravascular or infusion, not '${visibleText(routeText)}'`);
  const route: NcaRoute = routeText;
  const numbers: Record<string, number | undefined> = {};
  for (const name of ['dose-time', 'duration', 'interval', 'terminal-from']) {
    const n = numberOption(options, name);
    if (!n.ok) return usageError(n.message);
    numbers[name] = n.value;
  }
  // The dose: a number, optionally followed by its unit ("500 mg").
  let dose: NcaDose | undefined;
  let amountUnit: string | null = null;
  const doseText = options.get('dose');
  if (doseText !== undefined) {
    const m = /^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*([^\s\d].*)?$/.exec(doseText);
    if (!m || !(Number(m[1]) > 0)) return usageError(`--dose must be an amount above zero, optionally with its unit (e.g. 500 or "500 mg"), not '${visibleText(doseText)}'`);
    amountUnit = m[2]?.trim() ?? null;
    dose = { amount: Number(m[1]), time: numbers['dose-time'] ?? 0, route, ...(numbers.duration !== undefined ? { duration: numbers.duration } : {}) };
  } else {
    for (const name of ['dose-time', 'route', 'duration']) if (options.has(name)) return usageError(`--${name} describes the dose: give --dose too`);
  }
  if (route === 'infusion' && dose && dose.duration === undefined) return usageError('an infusion needs --duration');
  if (route !== 'infusion' && numbers.duration !== undefined) return usageError('--duration is for --route infusion');
  if (numbers.interval !== undefined && !(numbers.interval > 0)) return usageError('--interval must be above zero');
  if (numbers.duration !== undefined && !(numbers.duration > 0)) return usageError('--duration must be above zero');

  const shown = parsed.positional[0];
  const path = fromUserFolder(context.folder, shown);
  let text: string;
  try {
    text = readFileSync(path, 'utf8');
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    return { code: 1, stdout: '', stderr: `cannot read '${visibleText(shown)}'${code === 'ENOENT' ? ': no such file' : code === 'EISDIR' ? ': it is a folder' : code ? ` (${code})` : ''}\n` };
  }
  const levels = parseLevelsCsv(text, shown);
  if (!levels.ok) return { code: 1, stdout: '', stderr: levels.errors.join('\n') + '\n' };
  const units: NcaUnits = { ...levels.units, amount: amountUnit };

  const profiles: Profiled[] = [];
  const problems: string[] = [];
  const terminalFrom = numbers['terminal-from'];
  for (const [subject, list] of levels.groups) {
    const input = {
      times: list.map((l) => l.time),
      concentrations: list.map((l) => l.concentration),
      excluded: list.flatMap((l, i) => (l.belowLimit ? [i] : [])),
      rule,
      ...(dose ? { dose } : {}),
      ...(numbers.interval !== undefined ? { interval: numbers.interval } : {}),
    };
    const wrong = checkNcaInput(input);
    if (wrong.length > 0) problems.push(...wrong.map((w) => `${visibleText(shown)}, subject ${visibleText(subject)}: ${w}`));
    else {
      // The user fixes the terminal line by its first time: the levels from then on after Cmax (one rule with nca.terminal).
      const result = ncaProfile(terminalFrom !== undefined ? { ...input, terminalPoints: terminalPointsFrom(input, terminalFrom) } : input);
      // The excluded levels are named by the file's lines.
      for (const e of result.excluded) {
        const l = list[e.index];
        const i = result.flags.findIndex((f) => f.figure === 'levels' && f.message.startsWith(`the level at time ${e.time} `));
        if (i >= 0) result.flags[i] = { figure: 'levels', message: `line ${l.line} (time ${l.time}) is below the limit: excluded from every figure` };
      }
      profiles.push({ subject, result });
    }
  }
  if (problems.length > 0) return { code: 1, stdout: '', stderr: problems.join('\n') + '\n' };
  const summary = summariseNca(profiles);
  const routeShown = dose ? route : null;
  // Steady-state figures only with an interval; the bolus's C0 only for a bolus.
  const shownFigures = ncaFigureNames.filter((n) => {
    if (['aucTau', 'cavg', 'cminTau', 'cmaxTau', 'fluctuationPercent', 'swingPercent'].includes(n)) return numbers.interval !== undefined;
    if (n === 'c0') return routeShown === 'intravascular';
    return true;
  });

  if (format === 'json') {
    const out = {
      file: shown,
      units,
      rule,
      dose: dose ?? null,
      interval: numbers.interval ?? null,
      subjects: profiles.map((p) => ({ subject: p.subject, figures: p.result.figures, terminal: p.result.terminal, excluded: p.result.excluded, flags: p.result.flags })),
      summary,
      notes: [...levels.notes, closing],
    };
    return { code: 0, stdout: visibleLines(JSON.stringify(out, null, 2)) + '\n', stderr: '' };
  }
  if (format === 'csv') {
    const header = ['subject', ...shownFigures.map((n) => `${ncaLabel(n, routeShown)}${figureUnit(n, units) ? ` [${figureUnit(n, units)}]` : ''}`), 'flags'];
    const rows = profiles.map((p) => [p.subject, ...shownFigures.map((n) => (p.result.figures[n] === null ? '' : String(p.result.figures[n]))), p.result.flags.map((f) => `${f.figure}: ${f.message}`).join('; ')]);
    return { code: 0, stdout: visibleLines([header, ...rows].map((r) => r.map(csvField).join(',')).join('\n')) + '\n', stderr: '' };
  }
  const doseWords = dose ? `dose ${dose.amount}${amountUnit ? ` ${amountUnit}` : ''} at ${dose.time}${units.time ? ` ${units.time}` : ''}, ${route}${options.has('route') ? '' : ' (the default route)'}${dose.duration !== undefined ? ` over ${dose.duration}${units.time ? ` ${units.time}` : ''}` : ''}` : 'no dose given (areas from time 0; no CL, Vz or MRT)';
  const head = [
    `non-compartmental analysis of ${shown}: ${profiles.length} profile${profiles.length === 1 ? '' : 's'}; ${doseWords}; areas by ${ruleWords[rule]}${numbers.interval !== undefined ? `; steady state over τ = ${numbers.interval}${units.time ? ` ${units.time}` : ''}` : ''}`,
    ...levels.notes,
  ];
  const fixedWords = terminalFrom !== undefined ? `from ${fmt(terminalFrom)}${units.time ? ` ${units.time}` : ''} (--terminal-from)` : undefined;
  const parts = [head.join('\n'), ...profiles.map((p) => profileText(p, units, routeShown, shownFigures, fixedWords)), summaryText(summary, units, routeShown, shownFigures), closing];
  return { code: 0, stdout: visibleLines(parts.join('\n\n')) + '\n', stderr: '' };
}

/** `nca SCENARIO.json`: the scenario's observations (inline or its observations file), grouped by subject and compartment (nca-scenario.ts). */
function runScenarioNca(shown: string, folder: string, overrides: Pick<NcaOptions, 'rule' | 'terminalFrom'>, format: 'text' | 'json' | 'csv'): NcaCliOutcome {
  const path = fromUserFolder(folder, shown);
  const withLevels = readLevelsScenario(path, shown);
  if (!withLevels.ok) return { code: withLevels.code, stdout: '', stderr: visibleLines(withLevels.message) + '\n' };
  const parsed = parseScenario(withLevels.value);
  const model = parsed.ok ? buildModel(parsed.value) : parsed;
  // The section is read with the model: a wrong `nca` is reported as any other wrong field, by its path.
  const nca = !parsed.ok ? parsed : !model.ok ? model : ncaOfModel(model.value, { ...overrides, ...(parsed.value.nca ? { section: parsed.value.nca } : {}) });
  // A --terminal-from the scenario's clock and units cannot read is a usage error (exit 2), as it is with a CSV.
  const option = nca.ok ? undefined : nca.problems.find((p) => p.path === '--terminal-from');
  if (option) return { code: 2, stdout: '', stderr: `--terminal-from ${visibleText(option.message)}\n\n${ncaUsage}\n` };
  if (!nca.ok) {
    const list = nca.problems.map((p) => ({ path: visibleText(p.path), message: visibleText(p.message) }));
    return { code: 1, stdout: '', stderr: `${visibleText(shown)}: ${list.length} problem${list.length > 1 ? 's' : ''}:\n${describeProblems(list)}\n` };
  }
  return scenarioNcaOutput(nca.value, shown, format, withLevels.notes);
}

/** A profile's name in text and CSV: subject and compartment. */
function profileName(p: ScenarioNca['profiles'][number]): string {
  return `${p.subject ?? '(no subject)'} / ${p.compartment}`;
}

function scenarioNcaOutput(nca: ScenarioNca, shown: string, format: 'text' | 'json' | 'csv', fileNotes: string[]): NcaCliOutcome {
  const units: NcaUnits = nca.units;
  const steady = nca.profiles.some((p) => p.interval !== null);
  const shownFigures = ncaFigureNames.filter((n) => {
    if (['aucTau', 'cavg', 'cminTau', 'cmaxTau', 'fluctuationPercent', 'swingPercent'].includes(n)) return steady;
    if (n === 'c0') return nca.route === 'intravascular';
    return true;
  });
  if (format === 'json') return { code: 0, stdout: visibleLines(JSON.stringify({ file: shown, ...nca, notes: [...fileNotes, ...nca.notes] }, null, 2)) + '\n', stderr: '' };
  if (format === 'csv') {
    const header = ['subject', 'compartment', 'dose number', `interval [${units.time}]`, ...shownFigures.map((n) => `${ncaLabel(n, nca.route)}${figureUnit(n, units) ? ` [${figureUnit(n, units)}]` : ''}`), 'flags'];
    const rows = nca.profiles.map((p) => [p.subject ?? '', p.compartment, p.doseNumber === null ? '' : String(p.doseNumber), p.interval === null ? '' : String(p.interval), ...shownFigures.map((n) => (p.result.figures[n] === null ? '' : String(p.result.figures[n]))), [...p.result.flags.map((f) => `${f.figure}: ${f.message}`), ...p.leftOut.map((l) => `left out ${l.path}: ${l.reason}`)].join('; ')]);
    return { code: 0, stdout: visibleLines([header, ...rows].map((r) => r.map(csvField).join(',')).join('\n')) + '\n', stderr: '' };
  }
  const parts = [
    [`non-compartmental analysis of the observations in ${shown}: ${nca.profiles.length} profile${nca.profiles.length === 1 ? '' : 's'}; areas by ${ruleWords[nca.rule]}`, ...fileNotes, ...nca.notes.slice(0, -1)].join('\n'),
    ...nca.profiles.map((p) => {
      const where = p.dose ? `  after dose ${p.doseNumber} at ${fmt(p.dose.time)} ${units.time}${p.interval !== null ? `, steady state over τ = ${fmt(p.interval)} ${units.time}` : ''}; levels ${p.paths.join(', ')}` : `  levels ${p.paths.join(', ')}`;
      const left = p.leftOut.map((l) => `  left out ${l.path}: ${l.reason}`);
      const fixedWords = p.terminalFixed ? `from ${fmt(p.terminalFixed.from)} ${units.time} (${p.terminalFixed.path})` : undefined;
      const text = profileText({ subject: profileName(p), result: p.result }, units, nca.route, shownFigures, fixedWords).split('\n');
      return [text[0], where, ...left, ...text.slice(1)].join('\n');
    }),
    ...nca.summaries.map((s) => `compartment ${s.compartment}: ${summaryText(s.summary, units, nca.route, shownFigures)}`),
    closing,
  ];
  return { code: 0, stdout: visibleLines(parts.join('\n\n')) + '\n', stderr: '' };
}
