/**
 * Command line: simulate, report, validate, schema. Exit 0 on success, 1 when the scenario is
 * invalid or the computation fails, 2 on a usage error. Errors go to stderr as
 * "path: message" lines, never as stack traces.
 */
import { readFileSync, realpathSync, writeFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { summaryText } from '../models/summary-text.ts';
import { describeProblems, normaliseScenario, resultToCsv, resultToJsonText, scenarioJsonSchema, simulate, type Problem } from '../models/index.ts';
import { buildReport } from './report/report.ts';

const usage = `Tidemark — pharmacokinetic compartment-model simulator

usage:
  tidemark simulate FILE [--format json|csv|text] [--out FILE]
                                 simulate a scenario (JSON result on stdout by default;
                                 text = a readable summary of the figures)
  tidemark report FILE [--out report.pdf] [--reference FILE]
                                 write the printable concentration report (PDF; by default
                                 tidemark-<title>-<fingerprint>.pdf here); a reference
                                 scenario is drawn dashed over the curves
  tidemark validate FILE                                     check a scenario and list every problem
  tidemark schema                                            print the JSON Schema of the scenario format

Results are model simulations for review, not dosing advice.`;

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
  let text: string;
  try {
    text = readFileSync(path, 'utf8');
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    return { ok: false, message: `cannot read '${path}'${code === 'ENOENT' ? ': no such file' : code ? ` (${code})` : ''}` };
  }
  try {
    return { ok: true, value: JSON.parse(text) };
  } catch (e) {
    return { ok: false, message: `'${path}' is not valid JSON: ${(e as Error).message}` };
  }
}

function problems(list: Problem[], file: string): CliOutcome {
  return { code: 1, stdout: '', stderr: `${file}: the scenario has ${list.length} problem${list.length > 1 ? 's' : ''}:\n${describeProblems(list)}\n` };
}

function parseOptions(args: string[]): { positional: string[]; options: Map<string, string>; error: string | null } {
  const positional: string[] = [];
  const options = new Map<string, string>();
  for (let i = 0; i < args.length; i++) {
    const a = args[i];
    if (a.startsWith('--')) {
      const [name, inline] = a.slice(2).split('=', 2);
      const value = inline ?? args[++i];
      if (value === undefined) return { positional, options, error: `option --${name} needs a value` };
      options.set(name, value);
    } else positional.push(a);
  }
  return { positional, options, error: null };
}

export function runCli(args: string[]): CliOutcome {
  const [command, ...rest] = args;
  const { positional, options, error } = parseOptions(rest);
  const fail = (message: string): CliOutcome => ({ code: 2, stdout: '', stderr: `${message}\n\n${usage}\n` });
  if (error) return fail(error);
  switch (command) {
    case 'schema':
      return { code: 0, stdout: JSON.stringify(scenarioJsonSchema(), null, 2) + '\n', stderr: '' };
    case 'validate': {
      const input = readScenario(positional[0]);
      if (!input.ok) return fail(input.message);
      const model = normaliseScenario(input.value);
      if (!model.ok) return problems(model.problems, positional[0]);
      const m = model.value;
      return {
        code: 0,
        stdout: `${positional[0]}: valid — ${m.compartments.length} compartments, ${m.transfers.length} transfers, ${m.administrations.length} administrations, ${m.linear ? 'linear' : 'saturable'} model\n`,
        stderr: '',
      };
    }
    case 'simulate': {
      const unknown = [...options.keys()].filter((k) => k !== 'format' && k !== 'out');
      if (unknown.length > 0) return fail(`unknown option --${unknown[0]}`);
      const format = options.get('format') ?? 'json';
      if (format !== 'json' && format !== 'csv' && format !== 'text') return fail(`--format must be json, csv or text, not '${format}'`);
      const input = readScenario(positional[0]);
      if (!input.ok) return fail(input.message);
      const result = simulate(input.value);
      if (!result.ok) return problems(result.problems, positional[0]);
      const text =
        format === 'csv' ? resultToCsv(result.value) : format === 'text' ? summaryText(result.value) : resultToJsonText(result.value, 2) + '\n';
      const warnings = format === 'text' ? '' : result.value.diagnostics.warnings.map((w) => `warning: ${w}\n`).join('');
      const out = options.get('out');
      return out
        ? { code: 0, stdout: '', stderr: warnings + `wrote ${out}\n`, file: { path: out, text } }
        : { code: 0, stdout: text, stderr: warnings };
    }
    case 'report': {
      const unknown = [...options.keys()].filter((k) => k !== 'out' && k !== 'reference');
      if (unknown.length > 0) return fail(`unknown option --${unknown[0]}`);
      if (positional.length > 1) return fail(`unexpected argument '${positional[1]}'`);
      const input = readScenario(positional[0]);
      if (!input.ok) return fail(input.message);
      const referenceFile = options.get('reference');
      let reference: unknown;
      if (referenceFile !== undefined) {
        const read = readScenario(referenceFile);
        if (!read.ok) return fail(read.message);
        reference = read.value;
      }
      const report = buildReport(reference === undefined ? { scenario: input.value } : { scenario: input.value, reference });
      if (!report.ok) return problems(report.problems, positional[0]);
      const out = options.get('out') ?? report.fileName;
      return { code: 0, stdout: '', stderr: `wrote ${out} (${report.pages} pages, scenario fingerprint ${report.fingerprint})\n`, binaryFile: { path: out, bytes: report.bytes } };
    }
    case undefined:
    case 'help':
    case '--help':
      return { code: command === undefined ? 2 : 0, stdout: command === undefined ? '' : usage + '\n', stderr: command === undefined ? usage + '\n' : '' };
    default:
      return fail(`unknown command '${command}'`);
  }
}

function main(): void {
  let outcome: CliOutcome;
  try {
    outcome = runCli(process.argv.slice(2));
  } catch (e) {
    // A defect, not a user error: say so plainly, without a stack trace.
    process.stderr.write(`internal error: ${(e as Error).message ?? String(e)}\nPlease report this with the scenario file.\n`);
    process.exitCode = 1;
    return;
  }
  const file = outcome.file ? { path: outcome.file.path, data: outcome.file.text } : outcome.binaryFile ? { path: outcome.binaryFile.path, data: outcome.binaryFile.bytes } : null;
  if (file) {
    try {
      writeFileSync(file.path, file.data);
    } catch (e) {
      process.stderr.write(`cannot write '${file.path}': ${(e as Error).message}\n`);
      process.exitCode = 1;
      return;
    }
  }
  process.stdout.write(outcome.stdout);
  process.stderr.write(outcome.stderr);
  process.exitCode = outcome.code;
}

// Run only as the program itself (not when imported by tests); paths compared as files, since
// the module URL is percent-encoded (a space becomes %20) and argv[1] is not.
if (process.argv[1] && fileURLToPath(import.meta.url) === realpathSync(process.argv[1])) main();
