/**
 * What each command computes and says: simulate, report, validate, schema, verify, store, nca, propose, fit. Returns the exit
 * code, the text for stdout and stderr, and the file to write; writing it, and running the
 * computation under the time limit, is the program's part (cli.ts). Exit 0 on success, 1
 * when the scenario is invalid or the computation fails, 2 on a usage error. Errors are
 * "path: message" lines, never stack traces; user text in them has its control characters
 * shown as escapes. Path arguments are read from the user's folder (user-folder.ts), and a
 * file written is named with its absolute path.
 */
import { readFileSync } from 'node:fs';
import { summaryText } from '../models/result/summary-text.ts';
import { describeProblems, normaliseScenario, resultToCsv, resultToJsonText, scenarioJsonSchema, simulate, type Problem } from '../models/index.ts';
import { hasPopulation, planPopulation, runBatch, summarise, shardRange, type Batch, type ComputedBands, type PopulationPlan, type PopulationResult } from '../models/population/population.ts';
import { parseOptions, parseShard, parseTimeLimit, parseWhole, usage } from './cli-options.ts';
import { withCovariateFile } from './covariate-csv.ts';
import { withObservationsFile } from './observations-csv.ts';
import { checkParts, decodeBatch, makePart, readPart, type PartFile } from './population-parts.ts';
import { populationToCsv, populationToText } from './population-text.ts';
import { sameFile } from './same-file.ts';
import { visibleLines, visibleText } from './terminal-text.ts';
import { fromUserFolder } from './user-folder.ts';
import type { ReferenceCase } from './verify/cases.ts';

type ReportModule = typeof import('./report/report.ts');
type VerifyModule = typeof import('./verify/run.ts');
type StoreModule = typeof import('./store/cli.ts');
type NcaModule = typeof import('./nca-cli.ts');
type ProposeModule = typeof import('./propose-cli.ts');
type FitModule = typeof import('./fit-cli.ts');

/**
 * What only one command needs, loaded for it alone: the report writer (pdfkit and its fonts)
 * and the reference cases (mathjs's matrix functions). A simulate never pays for either.
 * loadCommandModules loads them before runCli, which stays synchronous.
 */
const onDemand: { report: ReportModule | null; verify: VerifyModule | null; store: StoreModule | null; nca: NcaModule | null; propose: ProposeModule | null; fit: FitModule | null } = { report: null, verify: null, store: null, nca: null, propose: null, fit: null };

/** Loads what the command in `args` needs beyond the engine (all of it when `args` is null, for importers). */
export async function loadCommandModules(args: string[] | null): Promise<void> {
  const command = args === null ? null : args[0];
  if (command === null || command === 'report') onDemand.report ??= await import('./report/report.ts');
  if (command === null || command === 'verify') onDemand.verify ??= await import('./verify/run.ts');
  if (command === null || command === 'store') onDemand.store ??= await import('./store/cli.ts');
  if (command === null || command === 'nca') onDemand.nca ??= await import('./nca-cli.ts');
  if (command === null || command === 'propose') onDemand.propose ??= await import('./propose-cli.ts');
  if (command === null || command === 'fit') onDemand.fit ??= await import('./fit-cli.ts');
}

function loaded<T>(module: T | null, command: string): T {
  // A defect of the program, not of the user's input: cli.ts and cli-worker.ts load it first.
  if (module === null) throw new Error(`the ${command} command's module was not loaded (loadCommandModules)`);
  return module;
}

export interface CliOutcome {
  code: number;
  stdout: string;
  stderr: string;
  /** File to write instead of stdout. */
  file?: { path: string; text: string };
  /** A binary file to write (the PDF report). */
  binaryFile?: { path: string; bytes: Uint8Array };
}

function readScenario(path: string | undefined): { ok: true; value: unknown } | { ok: false; message: string } {
  if (!path) return { ok: false, message: 'a scenario FILE is required' };
  const shown = visibleText(path);
  let text: string;
  try {
    text = readFileSync(path, 'utf8');
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    return { ok: false, message: `cannot read '${shown}'${code === 'ENOENT' ? ': no such file' : code ? ` (${code})` : ''}` };
  }
  try {
    return { ok: true, value: JSON.parse(text) };
  } catch (e) {
    return { ok: false, message: `'${shown}' is not valid JSON: ${visibleText((e as Error).message)}` };
  }
}

/** A population's result in the chosen format. */
function renderPopulation(r: PopulationResult, format: string): string {
  if (format === 'csv') return populationToCsv(r);
  if (format === 'text') return populationToText(r, visibleText);
  return JSON.stringify(r, null, 2) + '\n';
}

/** A population run, read and planned, ready for its subjects to be computed (in threads by the program). */
export interface PopulationJob {
  scenario: unknown;
  overrides: { subjects: number; seed: number };
  plan: PopulationPlan;
  /** The subjects to compute: all, or the shard's. */
  range: { first: number; count: number };
  shard: { index: number; of: number } | null;
  threads: number;
  /** The thread count was given (--threads): its workers start at once, not only when the work is worth them. */
  threadsGiven: boolean;
  format: 'json' | 'csv' | 'text';
  out: string | undefined;
  progress: boolean;
  /** Seconds (0: none). */
  timeLimit: number;
}

/**
 * Reads a population command line: its options, the scenario and its covariate file, and the
 * plan. Either the outcome already (a usage error, a problem) or the job to compute.
 */
export function preparePopulation(args: string[], context: CliContext & { cores?: number; terminal?: boolean } = {}): { outcome: CliOutcome } | { job: PopulationJob } {
  const [, ...rest] = args;
  const parsed = parseOptions(rest);
  const { options } = parsed;
  const folder = context.folder ?? process.cwd();
  const fail = (message: string) => ({ outcome: finish({ code: 2, stdout: '', stderr: `${visibleText(message)}\n\n${usage}\n` }) });
  if (parsed.error) return fail(parsed.error);
  const unknown = [...options.keys()].find((k) => !['subjects', 'seed', 'format', 'out', 'threads', 'shard', 'progress', 'time-limit'].includes(k));
  if (unknown !== undefined) return fail(`unknown option --${unknown}`);
  if (parsed.positional.length !== 1) return fail(parsed.positional.length === 0 ? 'a scenario FILE is required' : `unexpected argument '${parsed.positional[1]}'`);
  const file = fromUserFolder(folder, parsed.positional[0]);
  const subjects = parseWhole('subjects', options.get('subjects'), 1, 100_000);
  if (!subjects.ok) return fail(subjects.message);
  const seed = parseWhole('seed', options.get('seed'), 0, Number.MAX_SAFE_INTEGER);
  if (!seed.ok) return fail(seed.message);
  const threads = parseWhole('threads', options.get('threads'), 1, 256);
  if (!threads.ok) return fail(threads.message);
  const shard = parseShard(options.get('shard'));
  if (!shard.ok) return fail(shard.message);
  const limit = parseTimeLimit(options.get('time-limit'));
  if (!limit.ok) return fail(limit.message);
  const format = options.get('format') ?? 'json';
  if (format !== 'json' && format !== 'csv' && format !== 'text') return fail(`--format must be json, csv or text, not '${format}'`);
  const outGiven = options.get('out');
  const out = outGiven === undefined ? undefined : fromUserFolder(folder, outGiven);
  if (shard.value && out === undefined) return fail('--shard writes a part file: give it with --out FILE');
  if (shard.value && options.has('format')) return fail('--shard writes a part file (JSON for merge); --format applies to merge');
  if (out !== undefined) {
    const clash = overwritesInput(out, [['scenario file', file]]);
    if (clash) return fail(clash);
  }
  const read = readScenario(file);
  if (!read.ok) return fail(read.message);
  const input = withObservationsFile(read.value, file, parsed.positional[0]);
  if (!input.ok) return { outcome: finish({ code: 1, stdout: '', stderr: input.errors.join('\n') + '\n' }) };
  const withTable = withCovariateFile(input.value, file, parsed.positional[0]);
  if (!withTable.ok) return { outcome: finish({ code: 1, stdout: '', stderr: withTable.errors.join('\n') + '\n' }) };
  const plan = planPopulation(withTable.value, { subjects: subjects.value, seed: seed.value });
  if (!plan.ok) return { outcome: finish(problems(plan.problems, parsed.positional[0])) };
  const overrides = { subjects: plan.value.subjects, seed: plan.value.seed };
  const range = shard.value ? shardRange(overrides.subjects, shard.value.index, shard.value.of) : { first: 0, count: overrides.subjects };
  return {
    job: {
      scenario: withTable.value,
      overrides,
      plan: plan.value,
      range,
      shard: shard.value,
      threads: threads.value ?? Math.max(1, context.cores ?? 1),
      threadsGiven: threads.value !== undefined,
      format,
      out,
      progress: options.has('progress') || context.terminal === true,
      timeLimit: limit.seconds,
    },
  };
}

/** The outcome of a computed population job: the part file of a shard, else the summarised result (with the bands the threads found, when they did). */
export function finishPopulation(job: PopulationJob, batches: Batch[], computed?: ComputedBands): CliOutcome {
  if (job.shard) {
    const [batch] = batches.length === 1 ? batches : [joinBatches(batches)];
    const part = makePart(job.scenario, job.overrides, job.shard, batch);
    const text = JSON.stringify(part) + '\n';
    const { index, of } = job.shard;
    return finish({ code: 0, stdout: '', stderr: `wrote part ${index} of ${of} (${shardSubjects(job.range)}) to ${visibleText(job.out as string)}\n`, file: { path: job.out as string, text } });
  }
  const result = summarise(job.plan, batches, computed);
  if (!result.ok) return finish(problems(result.problems, 'population'));
  return deliver(result.value, job.format, job.out);
}

/** A shard's subjects in words: a shard of more parts than subjects holds none. */
export function shardSubjects(range: { first: number; count: number }): string {
  if (range.count === 0) return 'no subjects';
  return range.count === 1 ? `subject ${range.first}` : `subjects ${range.first} to ${range.first + range.count - 1}`;
}

function deliver(r: PopulationResult, format: string, out: string | undefined): CliOutcome {
  const text = renderPopulation(r, format);
  const warnings = format === 'text' ? '' : r.diagnostics.warnings.map((w) => `warning: ${visibleText(w)}\n`).join('');
  return finish(out !== undefined ? { code: 0, stdout: '', stderr: warnings + `wrote result to ${visibleText(out)}\n`, file: { path: out, text } } : { code: 0, stdout: text, stderr: warnings });
}

/** Consecutive batches (the threads of one shard) as one. */
export function joinBatches(batches: Batch[]): Batch {
  const sorted = [...batches].sort((a, b) => a.first - b.first);
  const count = sorted.reduce((s, b) => s + b.count, 0);
  const concat = <T extends Float64Array | Float32Array | Uint8Array>(make: (n: number) => T, pick: (b: Batch) => T): T => {
    const out = make(sorted.reduce((s, b) => s + pick(b).length, 0));
    let at = 0;
    for (const b of sorted) {
      out.set(pick(b), at);
      at += pick(b).length;
    }
    return out;
  };
  // Regimen arrays are laid out regimen by regimen over the batch's subjects: re-lay them over the joined subjects.
  const variants = sorted[0] && sorted[0].count > 0 ? sorted[0].regimenStatus.length / sorted[0].count : 0;
  const cols = variants > 0 && sorted[0].count > 0 ? sorted[0].regimenFigures.length / (variants * sorted[0].count) : 0;
  const regimenFigures = new Float64Array(variants * count * cols);
  const regimenStatus = new Uint8Array(variants * count);
  let offset = 0;
  for (const b of sorted) {
    for (let r = 0; r < variants; r++) {
      regimenFigures.set(b.regimenFigures.subarray(r * b.count * cols, (r + 1) * b.count * cols), (r * count + offset) * cols);
      regimenStatus.set(b.regimenStatus.subarray(r * b.count, (r + 1) * b.count), r * count + offset);
    }
    offset += b.count;
  }
  return {
    first: sorted[0]?.first ?? 0,
    count,
    grid: concat((n) => new Float32Array(n), (b) => b.grid),
    figures: concat((n) => new Float64Array(n), (b) => b.figures),
    status: concat((n) => new Uint8Array(n), (b) => b.status),
    regimenFigures,
    regimenStatus,
    methods: [...new Set(sorted.flatMap((b) => b.methods))].sort(),
    worstBalance: sorted.reduce((w, b) => Math.max(w, b.worstBalance), 0),
    steadyMessage: sorted.find((b) => b.steadyMessage)?.steadyMessage ?? null,
  };
}

/** merge: the part files read, checked as one run, and summarised. */
function merge(paths: string[], shownPaths: string[], format: string, out: string | undefined): CliOutcome {
  const inputProblem = (message: string): CliOutcome => ({ code: 1, stdout: '', stderr: message + '\n' });
  const parts: { name: string; part: PartFile }[] = [];
  for (let k = 0; k < paths.length; k++) {
    const name = visibleText(shownPaths[k]);
    const read = readScenario(paths[k]);
    if (!read.ok) return inputProblem(read.message);
    const part = readPart(read.value);
    if (!part.ok) return inputProblem(`${name}: ${part.message}`);
    parts.push({ name, part: part.value });
  }
  const mismatch = checkParts(parts);
  if (mismatch) return inputProblem(mismatch);
  const first = parts[0];
  const plan = planPopulation(first.part.scenario, first.part.overrides);
  if (!plan.ok) return problems(plan.problems, shownPaths[0]);
  const batches: Batch[] = [];
  for (const { name, part } of parts) {
    const batch = decodeBatch(part.batch, plan.value);
    if (!batch.ok) return inputProblem(`${name}: ${batch.message}`);
    batches.push(batch.value);
  }
  const result = summarise(plan.value, batches);
  if (!result.ok) return problems(result.problems, shownPaths[0]);
  return deliver(result.value, format, out);
}

function problems(list: Problem[], file: string): CliOutcome {
  // One line per problem: a newline inside a message (an id, a title) is escaped with the rest.
  const shown = list.map((p) => ({ path: visibleText(p.path), message: visibleText(p.message) }));
  return { code: 1, stdout: '', stderr: `${visibleText(file)}: the scenario has ${list.length} problem${list.length > 1 ? 's' : ''}:\n${describeProblems(shown)}\n` };
}

/** The input an output path would overwrite, as a usage error naming both; null when it overwrites none. */
function overwritesInput(out: string, inputs: [role: string, path: string | undefined][]): string | null {
  for (const [role, path] of inputs) {
    if (path !== undefined && sameFile(out, path)) {
      return `refusing to write the output to '${visibleText(out)}': it is the same file as the ${role} '${visibleText(path)}'`;
    }
  }
  return null;
}

/** Every byte for the terminal passes here: control characters the text still holds become visible. */
function finish(outcome: CliOutcome): CliOutcome {
  return { ...outcome, stdout: visibleLines(outcome.stdout), stderr: visibleLines(outcome.stderr) };
}

export interface CliContext {
  /** The folder relative paths are read from (default: the current folder). */
  folder?: string;
  /** The reference cases of verify (default: all of server/verify/cases.ts); tests pass a broken one. */
  cases?: ReferenceCase[];
  /** The environment the store command reads TIDEMARK_DATA from (default: process.env). */
  env?: Record<string, string | undefined>;
}

export function runCli(args: string[], context: CliContext = {}): CliOutcome {
  return finish(run(args, context));
}

function run(args: string[], context: CliContext): CliOutcome {
  // The store command has actions, options and a help of its own (store/cli.ts).
  if (args[0] === 'store') return loaded(onDemand.store, 'store').runStoreCli(args.slice(1), { folder: context.folder ?? process.cwd(), env: context.env ?? process.env });
  // So has nca (nca-cli.ts): levels from a CSV, no scenario.
  if (args[0] === 'nca') return loaded(onDemand.nca, 'nca').runNcaCli(args.slice(1), { folder: context.folder ?? process.cwd() });
  // And propose (propose-cli.ts): regimen proposals, run like simulate in the worker under the time limit.
  if (args[0] === 'propose') return finish(loaded(onDemand.propose, 'propose').runProposeCli(args.slice(1), { folder: context.folder ?? process.cwd() }));
  // And fit (fit-cli.ts): individual parameters from the levels, run like simulate; --out writes the fitted scenario.
  if (args[0] === 'fit') return finish(loaded(onDemand.fit, 'fit').runFitCli(args.slice(1), { folder: context.folder ?? process.cwd() }));
  // --help (or -h) anywhere asks for the summary, not for a command.
  if (args.includes('--help') || args.includes('-h')) return { code: 0, stdout: usage + '\n', stderr: '' };
  const [command, ...rest] = args;
  const parsed = parseOptions(rest);
  const { options, error } = parsed;
  // Every path argument, relative to the user's folder: positional (scenario files), --out, --reference.
  const folder = context.folder ?? process.cwd();
  const positional = parsed.positional.map((p) => fromUserFolder(folder, p));
  for (const name of ['out', 'reference']) {
    const value = options.get(name);
    if (value !== undefined) options.set(name, fromUserFolder(folder, value));
  }
  const fail = (message: string): CliOutcome => ({ code: 2, stdout: '', stderr: `${message}\n\n${usage}\n` });
  if (error) return fail(visibleText(error));
  const unknownOption = (allowed: string[]): CliOutcome | null => {
    const unknown = [...options.keys()].filter((k) => !allowed.includes(k));
    return unknown.length > 0 ? fail(`unknown option --${visibleText(unknown[0])}`) : null;
  };
  const limit = parseTimeLimit(options.get('time-limit'));
  switch (command) {
    case 'schema':
      return { code: 0, stdout: JSON.stringify(scenarioJsonSchema(), null, 2) + '\n', stderr: '' };
    case 'validate': {
      const wrong = unknownOption([]);
      if (wrong) return wrong;
      const read = readScenario(positional[0]);
      if (!read.ok) return fail(read.message);
      // An observations file is checked as simulate reads it.
      const input = withObservationsFile(read.value, positional[0] as string, parsed.positional[0]);
      if (!input.ok) return { code: 1, stdout: '', stderr: input.errors.join('\n') + '\n' };
      const model = normaliseScenario(input.value);
      if (!model.ok) return problems(model.problems, parsed.positional[0]);
      const m = model.value;
      // A population section is checked as `population` would read it (its covariate table file included).
      let population = '';
      if (hasPopulation(input.value)) {
        const withTable = withCovariateFile(input.value, positional[0] as string, parsed.positional[0]);
        if (!withTable.ok) return { code: 1, stdout: '', stderr: withTable.errors.join('\n') + '\n' };
        const plan = planPopulation(withTable.value);
        if (!plan.ok) return problems(plan.problems, parsed.positional[0]);
        population = `; a population of ${plan.value.subjects} with ${plan.value.varying.length} varying quantities, ${plan.value.targets.length} targets and ${plan.value.regimens.length} regimens`;
      }
      const levels = m.observations.length > 0 ? `; ${m.observations.length} observation${m.observations.length === 1 ? '' : 's'}` : '';
      return {
        code: 0,
        stdout: `${visibleText(parsed.positional[0])}: valid — ${m.compartments.length} compartments, ${m.transfers.length} transfers, ${m.administrations.length} administrations, ${m.linear ? 'linear' : 'saturable'} model${levels}${population}\n`,
        stderr: input.notes.map((n) => `note: ${n}\n`).join(''),
      };
    }
    case 'simulate': {
      const wrong = unknownOption(['format', 'out', 'time-limit']);
      if (wrong) return wrong;
      if (!limit.ok) return fail(visibleText(limit.message));
      const format = options.get('format') ?? 'json';
      if (format !== 'json' && format !== 'csv' && format !== 'text') return fail(`--format must be json, csv or text, not '${visibleText(format)}'`);
      const out = options.get('out');
      if (out !== undefined) {
        const clash = overwritesInput(out, [['scenario file', positional[0]]]);
        if (clash) return fail(clash);
      }
      const read = readScenario(positional[0]);
      if (!read.ok) return fail(read.message);
      const input = withObservationsFile(read.value, positional[0] as string, parsed.positional[0]);
      if (!input.ok) return { code: 1, stdout: '', stderr: input.errors.join('\n') + '\n' };
      const result = simulate(input.value);
      if (!result.ok) return problems(result.problems, parsed.positional[0]);
      const r = result.value;
      // The summary is read on a terminal: the title, warnings and subject ids (user text) on one line each.
      const text =
        format === 'csv'
          ? resultToCsv(r)
          : format === 'text'
            ? summaryText({
                ...r,
                title: visibleText(r.title),
                diagnostics: { ...r.diagnostics, warnings: r.diagnostics.warnings.map(visibleText) },
                observations: r.observations.map((o) => ({ ...o, subject: o.subject === null ? null : visibleText(o.subject) })),
              })
            : resultToJsonText(r, 2) + '\n';
      const warnings = input.notes.map((n) => `note: ${n}\n`).join('') + (format === 'text' ? '' : r.diagnostics.warnings.map((w) => `warning: ${visibleText(w)}\n`).join(''));
      return out !== undefined
        ? { code: 0, stdout: '', stderr: warnings + `wrote result to ${visibleText(out)}\n`, file: { path: out, text } }
        : { code: 0, stdout: text, stderr: warnings };
    }
    case 'population': {
      // Importers compute in this thread; the program (cli.ts) runs the same job across worker threads.
      const prepared = preparePopulation(args, context);
      if ('outcome' in prepared) return prepared.outcome;
      const { job } = prepared;
      const batch = runBatch(job.plan, job.range.first, job.range.count);
      if (!batch.ok) return problems(batch.problems, parsed.positional[0]);
      return finishPopulation(job, [batch.value]);
    }
    case 'merge': {
      const wrong = unknownOption(['format', 'out']);
      if (wrong) return wrong;
      if (positional.length === 0) return fail('merge needs the part files: merge PART... [--out FILE]');
      const format = options.get('format') ?? 'json';
      if (format !== 'json' && format !== 'csv' && format !== 'text') return fail(`--format must be json, csv or text, not '${visibleText(format)}'`);
      const out = options.get('out');
      if (out !== undefined) {
        const clash = overwritesInput(out, positional.map((p): [string, string] => ['part file', p]));
        if (clash) return fail(clash);
      }
      return merge(positional, parsed.positional, format, out);
    }
    case 'report': {
      const wrong = unknownOption(['out', 'reference', 'time-limit']);
      if (wrong) return wrong;
      if (!limit.ok) return fail(visibleText(limit.message));
      if (positional.length > 1) return fail(`unexpected argument '${visibleText(parsed.positional[1])}'`);
      const referenceFile = options.get('reference');
      const inputs: [string, string | undefined][] = [
        ['scenario file', positional[0]],
        ['reference file', referenceFile],
      ];
      const chosen = options.get('out');
      if (chosen !== undefined) {
        const clash = overwritesInput(chosen, inputs);
        if (clash) return fail(clash);
      }
      const read = readScenario(positional[0]);
      if (!read.ok) return fail(read.message);
      const input = withObservationsFile(read.value, positional[0] as string, parsed.positional[0]);
      if (!input.ok) return { code: 1, stdout: '', stderr: input.errors.join('\n') + '\n' };
      let reference: unknown;
      if (referenceFile !== undefined) {
        const read = readScenario(referenceFile);
        if (!read.ok) return fail(read.message);
        reference = read.value;
      }
      const report = loaded(onDemand.report, 'report').buildReport(reference === undefined ? { scenario: input.value } : { scenario: input.value, reference });
      if (!report.ok) return problems(report.problems, parsed.positional[0]);
      const out = chosen ?? fromUserFolder(folder, report.fileName);
      // The default name comes from the title: it could still be an input's name.
      const clash = chosen === undefined ? overwritesInput(out, inputs) : null;
      if (clash) return fail(clash);
      return {
        code: 0,
        stdout: '',
        stderr: `wrote report to ${visibleText(out)} (${report.pages} pages, scenario fingerprint ${report.fingerprint})\n`,
        binaryFile: { path: out, bytes: report.bytes },
      };
    }
    case 'verify': {
      const wrong = unknownOption(['out']);
      if (wrong) return wrong;
      if (parsed.positional.length > 0) return fail(`unexpected argument '${visibleText(parsed.positional[0])}'`);
      const { verify, verificationTable } = loaded(onDemand.verify, 'verify');
      const record = verify(context.cases);
      const out = options.get('out');
      const code = record.passed ? 0 : 1;
      const table = verificationTable(record);
      return out === undefined
        ? { code, stdout: table, stderr: '' }
        : { code, stdout: table, stderr: `wrote verification record to ${visibleText(out)}\n`, file: { path: out, text: JSON.stringify(record, null, 2) + '\n' } };
    }
    case undefined:
    case 'help':
      return { code: command === undefined ? 2 : 0, stdout: command === undefined ? '' : usage + '\n', stderr: command === undefined ? usage + '\n' : '' };
    default:
      return fail(`unknown command '${visibleText(command)}'`);
  }
}
