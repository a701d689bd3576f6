/**
 * What each command computes and says: simulate, report, validate, schema, verify. Returns the exit
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
import { parseOptions, parseTimeLimit, usage } from './cli-options.ts';
import { sameFile } from './same-file.ts';
import { visibleLines, visibleText } from './terminal-text.ts';
import { fromUserFolder } from './user-folder.ts';
import type { ReferenceCase } from './verify/cases.ts';

type ReportModule = typeof import('./report/report.ts');
type VerifyModule = typeof import('./verify/run.ts');

/**
 * What only one command needs, loaded for it alone: the report writer (pdfkit and its fonts)
 * and the reference cases (mathjs's matrix functions). A simulate never pays for either.
 * loadCommandModules loads them before runCli, which stays synchronous.
 */
const onDemand: { report: ReportModule | null; verify: VerifyModule | null } = { report: null, verify: null };

/** Loads what the command in `args` needs beyond the engine (all of it when `args` is null, for importers). */
export async function loadCommandModules(args: string[] | null): Promise<void> {
  const command = args === null ? null : args[0];
  if (command === null || command === 'report') onDemand.report ??= await import('./report/report.ts');
  if (command === null || command === 'verify') onDemand.verify ??= await import('./verify/run.ts');
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
}

export function runCli(args: string[], context: CliContext = {}): CliOutcome {
  return finish(run(args, context));
}

function run(args: string[], context: CliContext): CliOutcome {
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
      const input = readScenario(positional[0]);
      if (!input.ok) return fail(input.message);
      const model = normaliseScenario(input.value);
      if (!model.ok) return problems(model.problems, parsed.positional[0]);
      const m = model.value;
      return {
        code: 0,
        stdout: `${visibleText(parsed.positional[0])}: valid — ${m.compartments.length} compartments, ${m.transfers.length} transfers, ${m.administrations.length} administrations, ${m.linear ? 'linear' : 'saturable'} model\n`,
        stderr: '',
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
      const input = readScenario(positional[0]);
      if (!input.ok) return fail(input.message);
      const result = simulate(input.value);
      if (!result.ok) return problems(result.problems, parsed.positional[0]);
      const r = result.value;
      // The summary is read on a terminal: the title and warnings (user text) on one line each.
      const text =
        format === 'csv'
          ? resultToCsv(r)
          : format === 'text'
            ? summaryText({ ...r, title: visibleText(r.title), diagnostics: { ...r.diagnostics, warnings: r.diagnostics.warnings.map(visibleText) } })
            : resultToJsonText(r, 2) + '\n';
      const warnings = format === 'text' ? '' : r.diagnostics.warnings.map((w) => `warning: ${visibleText(w)}\n`).join('');
      return out !== undefined
        ? { code: 0, stdout: '', stderr: warnings + `wrote result to ${visibleText(out)}\n`, file: { path: out, text } }
        : { code: 0, stdout: text, stderr: warnings };
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
      const input = readScenario(positional[0]);
      if (!input.ok) return fail(input.message);
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
