/**
 * The command line's usage text and option parsing: small and free of the engine, so that
 * the program can read its time limit before the engine is loaded (in a worker thread).
 */

/** Default wall-clock limit of one simulate or report computation, in seconds. */
export const defaultTimeLimitSeconds = 600;

export const usage = `Tidemark — pharmacokinetic compartment-model simulator

usage: tidemark COMMAND [FILE] [options]        (from the repository: npm run -s cli -- COMMAND …)

commands:
  simulate FILE    simulate a scenario: the JSON result on stdout, or
                   --format csv (one row per time) or --format text (a readable summary)
                   options: [--format json|csv|text] [--out FILE] [--time-limit SECONDS]
  report FILE      write the printable concentration report (PDF), by default as
                   tidemark-<title>-<fingerprint>.pdf in the current folder
                   options: [--out report.pdf] [--reference FILE] [--time-limit SECONDS]
                   (--reference: a second scenario drawn dashed over the curves)
  population FILE  run the scenario's virtual population across worker threads: the result as
                   JSON (default), --format csv (percentile bands per time) or --format text
                   options: [--subjects N] [--seed S] [--format json|csv|text] [--out FILE]
                   [--threads K] [--shard I/N] [--progress] [--time-limit SECONDS]
                   --shard I/N (1 ≤ I ≤ N) runs part I of N of the subjects and writes a part
                   file (needs --out); a Slurm array gives I as $SLURM_ARRAY_TASK_ID, a Kubernetes
                   Indexed Job as $((JOB_COMPLETION_INDEX+1)) (its index counts from 0)
  merge PART...    summarise the part files of one population run into the whole result
                   (the same as the run without --shard); options: [--format json|csv|text] [--out FILE]
  validate FILE    check a scenario and list every problem with its place in the file
  schema           print the JSON Schema of the scenario format
  verify           check this installation: run published reference cases and print
                   case, source, expected, got, error, tolerance and verdict; exit 1 if any fails
                   options: [--out record.json] (the record as JSON, for a validation file)
  store ACTION     the scenario store (the server's, or --data DIR): list, show ID (a version's
                   scenario as JSON, --history, --diff A B), export FILE, import FILE, backup FILE;
                   \`store --help\` for its options
  nca FILE         non-compartmental figures of measured levels in a CSV (subject, time,
                   concentration, below limit), per subject and summarised; \`nca --help\` for its options
                   options: [--dose AMOUNT] [--dose-time T] [--route intravascular|extravascular|infusion]
                   [--duration D] [--interval TAU] [--rule linear|log-down] [--format text|json|csv]
  propose FILE     regimen proposals from the scenario's \`propose\` block: amounts from the strengths,
                   intervals and infusion durations solved to steady state, judged against the
                   targets and ranked, with the time to the window and an optional loading dose
                   options: [--format text|json] [--top N] [--threads K] [--time-limit SECONDS]
  fit FILE         the individual's own values of the quantities the scenario's \`fit\` section
                   names, from its measured levels (weighted least squares or maximum a posteriori)
                   options: [--objective wls|map] [--format text|json] [--out fitted.json]
  help             this summary

options:
  --out FILE                 written whole or not at all, never over an input file
  --time-limit SECONDS       stop a computation that runs longer (default ${defaultTimeLimitSeconds}; 0 for none)
  --threads K                population: threads, this one included, all started at once (default: this
                             machine's cores, the others started only when the work left would take
                             this thread over 2 s)
  --progress                 population: a progress line per 10% on stderr even when it is not a terminal

Relative paths are read from the current folder. Exit status: 0 success, 1 invalid scenario,
failed computation, failed verification or unwritable output, 2 usage error.

Results are model simulations for review, not dosing advice.`;

/** The longest a timer can wait (2³¹ − 1 ms); a longer limit would fire at once. */
const longestLimitSeconds = Math.floor((2 ** 31 - 1) / 1000);

export interface ParsedArgs {
  positional: string[];
  options: Map<string, string>;
  error: string | null;
}

/** Options that take no value. */
const flags = new Set(['progress']);

export function parseOptions(args: string[]): ParsedArgs {
  const positional: string[] = [];
  const options = new Map<string, string>();
  for (let i = 0; i < args.length; i++) {
    const a = args[i];
    if (a.startsWith('--')) {
      const eq = a.indexOf('=');
      const name = eq < 0 ? a.slice(2) : a.slice(2, eq);
      if (flags.has(name)) {
        if (eq >= 0) return { positional, options, error: `option --${name} takes no value` };
        options.set(name, 'yes');
        continue;
      }
      const value = eq < 0 ? args[++i] : a.slice(eq + 1);
      if (value === undefined) return { positional, options, error: `option --${name} needs a value` };
      options.set(name, value);
    } else positional.push(a);
  }
  return { positional, options, error: null };
}

/** The --time-limit option in seconds (0: none), or the usage error. */
export function parseTimeLimit(text: string | undefined): { ok: true; seconds: number } | { ok: false; message: string } {
  if (text === undefined) return { ok: true, seconds: defaultTimeLimitSeconds };
  const seconds = /^\s*(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?\s*$/.test(text) ? Number(text) : NaN;
  if (!(seconds >= 0 && seconds <= longestLimitSeconds)) {
    return { ok: false, message: `--time-limit must be a number of seconds (0 for none) up to ${longestLimitSeconds}, not '${text}'` };
  }
  return { ok: true, seconds };
}

/** What to say when a computation is stopped at the limit. */
export function timeLimitMessage(seconds: number): string {
  return (
    `the computation took longer than the time limit of ${seconds} s and was stopped; ` +
    'shorten the span (output.end), coarsen output.step or solver.step, loosen solver.rtol or use fewer doses, ' +
    'or allow more time with --time-limit SECONDS (0 for none)'
  );
}

/** A whole number option within [min, max], or the usage error. */
export function parseWhole(name: string, text: string | undefined, min: number, max: number): { ok: true; value: number | undefined } | { ok: false; message: string } {
  if (text === undefined) return { ok: true, value: undefined };
  const value = /^\s*\d+\s*$/.test(text) ? Number(text) : NaN;
  if (!(value >= min && value <= max)) return { ok: false, message: `--${name} must be a whole number from ${min} to ${max}, not '${text}'` };
  return { ok: true, value };
}

/** --shard I/N: part I (1-based) of N, or the usage error. */
export function parseShard(text: string | undefined): { ok: true; value: { index: number; of: number } | null } | { ok: false; message: string } {
  if (text === undefined) return { ok: true, value: null };
  const m = /^\s*(\d+)\s*\/\s*(\d+)\s*$/.exec(text);
  const index = m ? Number(m[1]) : NaN;
  const of = m ? Number(m[2]) : NaN;
  if (!(of >= 1 && of <= 100_000 && index >= 1 && index <= of)) {
    return { ok: false, message: `--shard must be I/N, part I of N with 1 ≤ I ≤ N ≤ 100000 (e.g. 2/8), not '${text}'` };
  }
  return { ok: true, value: { index, of } };
}
