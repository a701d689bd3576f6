/**
 * `tidemark nca FILE`: non-compartmental figures of measured levels in a CSV file, per subject,
 * then summarised over subjects. The file is read as every levels file is
 * (models/levels/observations-csv.ts, through server/observations-csv.ts: our headers `time`,
 * `concentration`, `subject`, `below limit`, `limit`, `compartment`, `label` or a --mapping,
 * units in brackets, `<0.5`, yes/no in its spellings, ISO 8601 date-times), then converted to
 * hours and mg/L (mmol/L for levels in moles) and grouped by subject (and compartment)
 * (models/levels/nca-levels.ts). Every bad row is reported as `FILE line N, column NAME:
 * message` (exit 1); none is dropped. Needs neither the engine nor a worker thread: cli.ts runs
 * it in the main thread.
 */
import { readFileSync } from 'node:fs';
import { checkNcaInput, ncaFigureInfo, ncaFigureNames, ncaLabel, ncaProfile, type NcaDimension, type NcaDose, type NcaFigureName, type NcaResult, type NcaRoute, type NcaRule } from '../models/levels/nca.ts';
import { summariseNca, type NcaFigureSummary, type NcaSummary } from '../models/levels/nca-summary.ts';
import { ncaOfModel, type NcaOptions, type ScenarioNca } from '../models/levels/nca-scenario.ts';
import { terminalPointsFrom } from '../models/levels/terminal-from.ts';
import { buildModel, parseScenario } from '../models/scenario/normalize.ts';
import { describeProblems } from '../models/scenario/problems.ts';
import { parseObservationsCsv, readLevelsScenario } from './observations-csv.ts';
import { parseOptions } from './cli-options.ts';
import { clockLabel, looksLikeDateTime, type Clock } from '../models/levels/clock.ts';
import { ncaLevelsOf, type NcaLevels } from '../models/levels/nca-levels.ts';
import { defaultHeaders, observationFields, type ObservationField } from '../models/levels/observations-csv.ts';
import { readInstant, unitsPerHour, type InstantReader } from '../models/scenario/instants.ts';
import type { ObservationMapping } from '../models/scenario/schema.ts';
import { convertQuantity, unitWritten } from '../models/scenario/units.ts';
import { visibleLines, visibleText } from './terminal-text.ts';
import { fromUserFolder } from './user-folder.ts';

export interface NcaCliOutcome {
  code: number;
  stdout: string;
  stderr: string;
}

export const ncaUsage = `usage: tidemark nca FILE [options]      (from the repository: npm run -s cli -- nca FILE …)

Non-compartmental figures of measured levels, per subject, then a summary over subjects.
FILE is a scenario (.json) with observations, or a CSV of levels read as a scenario's levels file:
headers time, concentration and optionally subject, below limit, limit, compartment, label (any
case, or mapped with --mapping), a unit in brackets ("time [min]", "concentration [ug/mL]"),
times as numbers or ISO 8601 date-times, "<0.5" for a level below the limit 0.5. Figures are in
hours and mg/L (mmol/L for levels in moles); a number without a unit is taken in those.
A row below the limit is left out of every figure and named.
A scenario gives its own dose (its first dose line: nominal amount, route by where it goes) and,
when that line repeats, the steady-state interval; its "nca" section may give the rule and fix
terminal lines. Only --rule, --terminal-from and --format apply to a scenario; given, --rule and
--terminal-from override the section (--terminal-from then fixes the line of every profile).

options:
  --dose AMOUNT          the dose, e.g. 500 or "500 mg" (CL, Vz and MRT need it; no unit: mg)
  --dose-time T          when it was given (default 0): a number in the file's time unit, a time
                         such as "48 h", or a date-time when the file's times are date-times
  --route R              intravascular (bolus), extravascular (default) or infusion
  --duration D           an infusion's length (as --interval; needed for an infusion)
  --interval TAU         the dosing interval at steady state, a number in the file's time unit or
                         e.g. "12 h": AUCτ, Cavg, Cmin, Cmax, fluctuation, swing; a level drawn
                         within τ/4 before the dose is its pre-dose level, else C(τ) stands for it
  --rule R               log-down (linear up, log-linear down; default) or linear
  --terminal-from T      fix the terminal line: the levels at or after time T that come after Cmax
                         (below-limit ones left out) instead of the best adjusted R²; T as
                         --dose-time, or for a scenario an instant as it writes them
                         ("96 h", or a date-time by its clock); fewer than 3 levels are flagged
  --mapping F=H,…        which header holds each field, e.g. "time=Sample drawn,concentration=Level"
  --format F             text (default), json or csv (one row per subject)

NCA figures describe the levels given; they are not dosing advice.`;

const closing = 'NCA figures describe the levels given; they are not dosing advice.';

export interface NcaUnits {
  time: string | null;
  concentration: string | null;
  amount: string | null;
}

const numberPattern = /^[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?$/;

/** "line 7" of "levels.csv line 7", for flags beside a file's own lines. */
function lineOf(source: string): string {
  const m = /line \d+$/.exec(source);
  return m ? m[0] : source;
}

/** --mapping "time=Sample drawn,concentration=Level": which header holds each field, as a scenario's observations.mapping. */
export function readMappingOption(text: string): { ok: true; mapping: ObservationMapping } | { ok: false; message: string } {
  const mapping: Record<string, string> = {};
  for (const part of text.split(',')) {
    const m = /^\s*([A-Za-z]+)\s*=\s*(.*?)\s*$/.exec(part);
    const field = m?.[1] as ObservationField | undefined;
    if (!m || field === undefined || !observationFields.includes(field)) return { ok: false, message: `--mapping takes FIELD=HEADER pairs separated by commas, FIELD one of ${observationFields.join(', ')}; not '${visibleText(part.trim())}'` };
    if (m[2] === '') return { ok: false, message: `--mapping: ${field} needs the header of a column` };
    if (mapping[field] !== undefined) return { ok: false, message: `--mapping names ${field} twice` };
    mapping[field] = m[2];
  }
  return { ok: true, mapping: mapping as ObservationMapping };
}

/**
 * The levels of a CSV text, read as every levels file is (models/levels/observations-csv.ts:
 * our headers or a mapping, units in brackets, `<0.5`, yes/no in its spellings, ISO 8601
 * date-times), then converted to one unit system and grouped by subject (nca-levels.ts).
 * Errors are full lines, `FILE line N, column NAME: message`, with control characters made visible.
 */
export function parseLevelsCsv(text: string, file: string, mapping: ObservationMapping = {}, instants: readonly string[] = []): { ok: true; levels: NcaLevels; notes: string[] } | { ok: false; errors: string[] } {
  const read = parseObservationsCsv(text, file, mapping);
  if (!read.ok) return read;
  const columns = { time: mapping.time ?? defaultHeaders.time, concentration: mapping.concentration ?? defaultHeaders.concentration, limit: mapping.limit ?? defaultHeaders.limit };
  const levels = ncaLevelsOf(read.observations, columns, instants);
  if (!levels.ok) return { ok: false, errors: levels.errors.map(visibleText) };
  return { ok: true, levels: levels.value, notes: [...read.notes, ...levels.value.notes.map(visibleText)] };
}

/** A time option: a quantity ("48 h"), a bare number in the file's time unit, or (where allowed) a date-time by the file's clock; in the levels' time unit. */
function readTimeOption(name: string, text: string, levels: NcaLevels, dateTime: boolean): { ok: true; value: number } | { ok: false; message: string } {
  const trimmed = text.trim();
  if (looksLikeDateTime(trimmed) && !dateTime) return { ok: false, message: `--${name} is a duration, not a date-time ('${visibleText(trimmed)}')` };
  let failed: string | null = null;
  const reader: InstantReader = {
    units: levels.units,
    fail: (_path, message) => (failed ??= message),
    read: (q, dimension) => {
      if (q === undefined) return null;
      const c = convertQuantity(q, dimension, levels.units);
      if (!c.ok) failed ??= c.message;
      return c.ok ? c.value : null;
    },
  };
  if (looksLikeDateTime(trimmed) && levels.clock === null) return { ok: false, message: `--${name} is a date-time, but the file's times are not: give it in the file's time unit` };
  const q = numberPattern.test(trimmed) ? (levels.fileTimeUnit !== null ? `${trimmed} ${levels.fileTimeUnit}` : Number(trimmed)) : trimmed;
  const value = readInstant(q, `--${name}`, levels.clock, reader);
  return value === null ? { ok: false, message: `--${name} ${visibleText(failed ?? 'could not be read')}` } : { ok: true, value };
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

export function runNcaCli(args: string[], context: { folder: string }): NcaCliOutcome {
  if (args.includes('--help') || args.includes('-h')) return { code: 0, stdout: ncaUsage + '\n', stderr: '' };
  const usageError = (message: string): NcaCliOutcome => ({ code: 2, stdout: '', stderr: `${message}\n\n${ncaUsage}\n` });
  const parsed = parseOptions(args);
  if (parsed.error) return usageError(visibleText(parsed.error));
  const { options } = parsed;
  const allowed = ['dose', 'dose-time', 'route', 'duration', 'interval', 'rule', 'format', 'terminal-from', 'mapping'];
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
    if (options.has('mapping')) return usageError("--mapping is for a CSV of levels; a scenario's observations file is mapped by its observations.mapping");
    const from = options.get('terminal-from');
    if (from !== undefined && from.trim() === '') return usageError('--terminal-from needs a time, e.g. "96 h" or a date-time');
    return runScenarioNca(parsed.positional[0], context.folder, { ...(options.has('rule') ? { rule } : {}), ...(from !== undefined ? { terminalFrom: { from, path: '--terminal-from' } } : {}) }, format as 'text' | 'json' | 'csv');
  }
  const routeText = options.get('route') ?? 'extravascular';
  if (routeText !== 'intravascular' && routeText !== 'extravascular' && routeText !== 'infusion') return usageError(`--route must be intravascular, extravascular or infusion, not '${visibleText(routeText)}'`);
  const route: NcaRoute = routeText;
  // The dose: a number, optionally followed by its unit ("500 mg"); converted once the file's unit system is known.
  const doseText = options.get('dose');
  if (doseText !== undefined) {
    const m = /^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*([^\s\d].*)?$/.exec(doseText);
    if (!m || !(Number(m[1]) > 0)) return usageError(`--dose must be an amount above zero, optionally with its unit (e.g. 500 or "500 mg"), not '${visibleText(doseText)}'`);
  } else {
    for (const name of ['dose-time', 'route', 'duration']) if (options.has(name)) return usageError(`--${name} describes the dose: give --dose too`);
  }
  if (route === 'infusion' && doseText !== undefined && !options.has('duration')) return usageError('an infusion needs --duration');
  if (route !== 'infusion' && options.has('duration')) return usageError('--duration is for --route infusion');
  for (const name of ['dose-time', 'duration', 'interval', 'terminal-from']) if (options.get(name)?.trim() === '') return usageError(`--${name} needs a time, e.g. 12 or "12 h"`);
  let mapping: ObservationMapping = {};
  const mappingText = options.get('mapping');
  if (mappingText !== undefined) {
    const m = readMappingOption(mappingText);
    if (!m.ok) return usageError(m.message);
    mapping = m.mapping;
  }

  const shown = parsed.positional[0];
  const path = fromUserFolder(context.folder, shown);
  let text: string;
  try {
    text = readFileSync(path, 'utf8');
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    return { code: 1, stdout: '', stderr: `cannot read '${visibleText(shown)}'${code === 'ENOENT' ? ': no such file' : code === 'EISDIR' ? ': it is a folder' : code ? ` (${code})` : ''}\n` };
  }
  // A dose written as a date-time is read by the file's clock, whose origin is then no later than it.
  const doseTimeText = options.get('dose-time');
  const read = parseLevelsCsv(text, shown, mapping, doseTimeText !== undefined && looksLikeDateTime(doseTimeText) ? [doseTimeText.trim()] : []);
  if (!read.ok) return { code: 1, stdout: '', stderr: read.errors.join('\n') + '\n' };
  const levels = read.levels;
  const units: NcaUnits = { time: levels.units.time, concentration: `${levels.units.amount}/${levels.units.volume}`, amount: levels.units.amount };
  // Times of options in the levels' unit: a quantity, a bare number in the file's time unit, a date-time by the file's clock.
  const times: Record<string, number | undefined> = {};
  for (const [name, dateTime] of [['dose-time', true], ['duration', false], ['interval', false], ['terminal-from', true]] as const) {
    const t = options.get(name);
    if (t === undefined) continue;
    const value = readTimeOption(name, t, levels, dateTime);
    if (!value.ok) return usageError(value.message);
    times[name] = value.value;
  }
  if (times.interval !== undefined && !(times.interval > 0)) return usageError('--interval must be above zero');
  if (times.duration !== undefined && !(times.duration > 0)) return usageError('--duration must be above zero');
  let dose: NcaDose | undefined;
  const notes = [...read.notes];
  if (doseText !== undefined) {
    const amount = convertQuantity(doseText.trim(), 'amount', levels.units);
    if (!amount.ok) return usageError(`--dose ${visibleText(amount.message)}`);
    if (unitWritten(doseText.trim()) === null) notes.push(`the dose has no unit: read as ${units.amount}`);
    dose = { amount: amount.value, time: times['dose-time'] ?? 0, route, ...(times.duration !== undefined ? { duration: times.duration } : {}) };
  }

  const profiles: Profiled[] = [];
  const problems: string[] = [];
  const terminalFrom = times['terminal-from'];
  for (const [subject, list] of levels.groups) {
    const input = {
      times: list.map((l) => l.time),
      concentrations: list.map((l) => l.concentration),
      excluded: list.flatMap((l, i) => (l.belowLimit ? [i] : [])),
      rule,
      ...(dose ? { dose } : {}),
      ...(times.interval !== undefined ? { interval: times.interval } : {}),
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
        if (i >= 0) result.flags[i] = { figure: 'levels', message: `${lineOf(l.source)} (time ${fmt(l.time)}${levels.clock ? `, ${clockLabel(l.time, levels.clock)}` : ''}) is below the limit: excluded from every figure` };
      }
      profiles.push({ subject, result });
    }
  }
  if (problems.length > 0) return { code: 1, stdout: '', stderr: problems.join('\n') + '\n' };
  const summary = summariseNca(profiles);
  const routeShown = dose ? route : null;
  // Steady-state figures only with an interval; the bolus's C0 only for a bolus.
  const shownFigures = ncaFigureNames.filter((n) => {
    if (['aucTau', 'cavg', 'cminTau', 'cmaxTau', 'fluctuationPercent', 'swingPercent'].includes(n)) return times.interval !== undefined;
    if (n === 'c0') return routeShown === 'intravascular';
    return true;
  });

  if (format === 'json') {
    const out = {
      file: shown,
      units,
      rule,
      dose: dose ?? null,
      interval: times.interval ?? null,
      clockOrigin: levels.clock ? clockLabel(0, levels.clock) : null,
      subjects: profiles.map((p) => ({ subject: p.subject, figures: p.result.figures, terminal: p.result.terminal, excluded: p.result.excluded, flags: p.result.flags })),
      summary,
      notes: [...notes, closing],
    };
    return { code: 0, stdout: visibleLines(JSON.stringify(out, null, 2)) + '\n', stderr: '' };
  }
  if (format === 'csv') {
    const header = ['subject', ...shownFigures.map((n) => `${ncaLabel(n, routeShown)}${figureUnit(n, units) ? ` [${figureUnit(n, units)}]` : ''}`), 'flags'];
    const rows = profiles.map((p) => [p.subject, ...shownFigures.map((n) => (p.result.figures[n] === null ? '' : String(p.result.figures[n]))), p.result.flags.map((f) => `${f.figure}: ${f.message}`).join('; ')]);
    return { code: 0, stdout: visibleLines([header, ...rows].map((r) => r.map(csvField).join(',')).join('\n')) + '\n', stderr: '' };
  }
  const at = (t: number) => `${fmt(t)} ${units.time}${levels.clock ? ` (${clockLabel(t, levels.clock)})` : ''}`;
  const doseWords = dose ? `dose ${fmt(dose.amount)} ${units.amount} at ${at(dose.time)}, ${route}${options.has('route') ? '' : ' (the default route)'}${dose.duration !== undefined ? ` over ${fmt(dose.duration)} ${units.time}` : ''}` : 'no dose given (areas from time 0; no CL, Vz or MRT)';
  const head = [
    `non-compartmental analysis of ${shown}: ${profiles.length} profile${profiles.length === 1 ? '' : 's'}; ${doseWords}; areas by ${ruleWords[rule]}${times.interval !== undefined ? `; steady state over τ = ${fmt(times.interval)} ${units.time}` : ''}`,
    ...notes,
  ];
  const fixedWords = terminalFrom !== undefined ? `from ${at(terminalFrom)} (--terminal-from)` : undefined;
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
  // With a clock, times are shown with their clock time beside them, as the simulate text does.
  const clock = model.ok ? model.value.clock : null;
  const perHour = model.ok ? unitsPerHour(model.value.units) : 1;
  return scenarioNcaOutput(nca.value, shown, format, withLevels.notes, clock, perHour);
}

/** A profile's name in text and CSV: subject and compartment. */
function profileName(p: ScenarioNca['profiles'][number]): string {
  return `${p.subject ?? '(no subject)'} / ${p.compartment}`;
}

/** An instant in the scenario's time unit, with its clock time when the scenario has a clock: "24 h (2026-03-05 08:00 (+01:00))". */
export function instantWords(t: number, unit: string, clock: Pick<Clock, 'originMs' | 'zoneMinutes'> | null, unitsPerHour: number): string {
  return `${fmt(t)} ${unit}${clock ? ` (${clockLabel(t / unitsPerHour, clock)})` : ''}`;
}

function scenarioNcaOutput(nca: ScenarioNca, shown: string, format: 'text' | 'json' | 'csv', fileNotes: string[], clock: Clock | null, perHour: number): NcaCliOutcome {
  const units: NcaUnits = nca.units;
  const at = (t: number) => instantWords(t, nca.units.time, clock, perHour);
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
      const where = p.dose ? `  after dose ${p.doseNumber} at ${at(p.dose.time)}${p.interval !== null ? `, steady state over τ = ${fmt(p.interval)} ${units.time}` : ''}; levels ${p.paths.join(', ')}` : `  levels ${p.paths.join(', ')}`;
      const left = p.leftOut.map((l) => `  left out ${l.path}: ${l.reason}`);
      const fixedWords = p.terminalFixed ? `from ${at(p.terminalFixed.from)} (${p.terminalFixed.path})` : undefined;
      const text = profileText({ subject: profileName(p), result: p.result }, units, nca.route, shownFigures, fixedWords).split('\n');
      return [text[0], where, ...left, ...text.slice(1)].join('\n');
    }),
    ...nca.summaries.map((s) => `compartment ${s.compartment}: ${summaryText(s.summary, units, nca.route, shownFigures)}`),
    closing,
  ];
  return { code: 0, stdout: visibleLines(parts.join('\n\n')) + '\n', stderr: '' };
}
