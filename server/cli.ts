/**
 * Command line: simulate, report, population, merge, validate, schema, verify, store, nca (the commands are in cli-commands.ts; store in store/cli.ts, nca in nca-cli.ts).
 * Exit 0 on success, 1 when the scenario is invalid, the computation fails or exceeds its
 * time limit, or the output cannot be written; 2 on a usage error. Errors go to stderr as
 * "path: message" lines, never as stack traces.
 *
 * As a program, simulate and report run in a worker thread stopped at --time-limit, and
 * their output file is written whole or not at all (write-file-atomic.ts). Relative paths are
 * read from the folder the user typed the command in (user-folder.ts), also under `npm run`.
 *
 * Output piped into a program that stops reading (`… | head`) ends quietly: the rest of the
 * output is dropped and the command keeps its own exit status (0 when it succeeded), rather
 * than dying of SIGPIPE (status 141 in a shell) — so that `set -o pipefail` scripts do not fail
 * because the reader had seen enough, while a failing verify still exits 1.
 */
import { realpathSync } from 'node:fs';
import { availableParallelism } from 'node:os';
import { fileURLToPath } from 'node:url';
import { isMainThread } from 'node:worker_threads';
import type { CliContext, CliOutcome } from './cli-commands.ts';
import { parseOptions, parseTimeLimit, timeLimitMessage } from './cli-options.ts';
import type { CliWorkerData, WorkerOutcome } from './cli-worker.ts';
import { tuneEngine } from './engine-flags.ts';
import { visibleLines, visibleText } from './terminal-text.ts';
import { userFolder } from './user-folder.ts';
import { populationWorkerFor, runThreads } from './population-threads.ts';
import { startWorker, type WorkerModule } from './worker-pool.ts';
import { writeFileAtomic } from './write-file-atomic.ts';

export type { CliContext, CliOutcome } from './cli-commands.ts';

// Run only as the program itself (not when imported by tests, nor in its own worker, whose
// argv[1] is the program's too); paths compared as files, since the module URL is
// percent-encoded (a space becomes %20) and argv[1] is not.
const asProgram = isMainThread && !!process.argv[1] && fileURLToPath(import.meta.url) === realpathSync(process.argv[1]);

// The engine takes seconds to load. The program loads it once, in the worker that computes;
// an importer (the tests) gets it here, so that runCli stays a plain synchronous function.
const commands = asProgram ? null : await import('./cli-commands.ts');
await commands?.loadCommandModules(null);

/** The outcome of one command line, computed in this thread without a time limit; nothing is written. */
export function runCli(args: string[], context: CliContext = {}): CliOutcome {
  if (!commands) throw new Error('runCli is for importers; the program runs main()');
  return commands.runCli(args, context);
}

type Finished = { code: number; stdout: Uint8Array | string; stderr: string; file?: { path: string; data: Uint8Array | string } };

// `npm run cli` runs the build of this file (dist/server/cli.js, scripts/build-server.mjs),
// which keeps its own URL: it starts the built worker beside it with plain node. From the
// sources (tsx server/cli.ts), the worker's source runs through tsx.
const cliWorker: WorkerModule = import.meta.url.endsWith('.js')
  ? { kind: 'built', url: new URL('./cli-worker.js', import.meta.url) }
  : { kind: 'source', url: new URL('./cli-worker.ts', import.meta.url) };

/**
 * Runs the command in a worker thread; the limit counts from when the engine is loaded and
 * the job is handed over, so a slow start-up on a busy machine does not eat into it.
 */
function runInWorker(args: string[], folder: string, seconds: number): Promise<Finished> {
  return new Promise((resolve) => {
    const worker = startWorker(cliWorker, { workerData: { command: args[0] ?? '' } satisfies CliWorkerData });
    let timer: NodeJS.Timeout | null = null;
    let settled = false;
    const settle = (f: Finished) => {
      if (settled) return;
      settled = true;
      if (timer) clearTimeout(timer);
      void worker.terminate();
      resolve(f);
    };
    const internal = (message: string): Finished => ({ code: 1, stdout: '', stderr: `internal error: ${message}\nPlease report this with the scenario file.\n` });
    worker.on('message', (m: WorkerOutcome | { ready: true }) => {
      if ('ready' in m) {
        timer = setTimeout(() => settle({ code: 1, stdout: '', stderr: timeLimitMessage(seconds) + '\n' }), seconds * 1000);
        worker.postMessage({ args, folder });
        return;
      }
      settle({ code: m.code, stdout: m.stdout, stderr: m.stderr, ...(m.file ? { file: { path: m.file.path, data: m.file.bytes } } : {}) });
    });
    worker.on('error', (e) => {
      if ((e as NodeJS.ErrnoException).code === 'ERR_WORKER_OUT_OF_MEMORY') {
        settle({ code: 1, stdout: '', stderr: 'the computation ran out of memory and was stopped; shorten the span (output.end), coarsen output.step or solver.step, or use fewer doses\n' });
      } else settle(internal(visibleText(e.message)));
    });
    worker.on('exit', () => settle(internal('the computation stopped unexpectedly')));
  });
}

async function runInThread(args: string[], folder: string): Promise<Finished> {
  const { loadCommandModules, runCli: run } = await import('./cli-commands.ts');
  await loadCommandModules(args);
  const o = run(args, { folder });
  const file = o.file ? { path: o.file.path, data: o.file.text } : o.binaryFile ? { path: o.binaryFile.path, data: o.binaryFile.bytes } : undefined;
  return { code: o.code, stdout: o.stdout, stderr: o.stderr, ...(file ? { file } : {}) };
}

/**
 * population: read and planned here, its subjects computed across worker threads (each runs
 * a contiguous range; the result does not depend on how many), stopped at --time-limit.
 * Progress, a line per 10%, goes to stderr as it happens when stderr is a terminal or
 * --progress is given.
 */
async function runPopulation(args: string[], folder: string): Promise<Finished> {
  const { preparePopulation, finishPopulation } = await import('./cli-commands.ts');
  const prepared = preparePopulation(args, { folder, cores: availableParallelism(), terminal: process.stderr.isTTY === true });
  if ('outcome' in prepared) return toFinished(prepared.outcome);
  const { job } = prepared;
  const controller = new AbortController();
  const timer = job.timeLimit > 0 ? setTimeout(() => controller.abort(), job.timeLimit * 1000) : null;
  let shown = 0;
  const what = job.shard ? `part ${job.shard.index} of ${job.shard.of}: ` : '';
  const onProgress = job.progress
    ? (done: number, total: number) => {
        const tenth = total > 0 ? Math.floor((done * 10) / total) : 10;
        if (tenth <= shown) return;
        shown = tenth;
        process.stderr.write(`population: ${what}${tenth * 10}% (${done} of ${total} subjects)\n`);
      }
    : undefined;
  try {
    const threads = Math.max(1, Math.min(job.threads, job.range.count));
    const run = await runThreads(job.scenario, job.overrides, job.overrides.subjects, { threads, plan: job.plan, bands: job.shard === null, workersAtOnce: job.threadsGiven, worker: populationWorkerFor(import.meta.url), range: job.range, signal: controller.signal, onProgress });
    if (controller.signal.aborted) return { code: 1, stdout: '', stderr: timeLimitMessage(job.timeLimit) + '\n' };
    if (!run.ok) return { code: 1, stdout: '', stderr: run.problems.map((p) => `${visibleText(p.path)}: ${visibleText(p.message)}`).join('\n') + '\n' };
    return toFinished(finishPopulation(job, run.value, run.computed));
  } finally {
    if (timer) clearTimeout(timer);
  }
}

/** store: the store's actions need neither the engine nor a worker thread, so they load neither (store/cli.ts). */
async function runStore(args: string[], folder: string): Promise<Finished> {
  const { runStoreCli } = await import('./store/cli.ts');
  const o = runStoreCli(args.slice(1), { folder, env: process.env });
  return toFinished({ ...o, stdout: visibleLines(o.stdout), stderr: visibleLines(o.stderr) });
}

/** nca: non-compartmental figures of a levels CSV, pure arithmetic: neither the engine nor a worker thread (nca-cli.ts). */
async function runNca(args: string[], folder: string): Promise<Finished> {
  const { runNcaCli } = await import('./nca-cli.ts');
  return toFinished(runNcaCli(args.slice(1), { folder }));
}

function toFinished(o: CliOutcome): Finished {
  const file = o.file ? { path: o.file.path, data: o.file.text } : o.binaryFile ? { path: o.binaryFile.path, data: o.binaryFile.bytes } : undefined;
  return { code: o.code, stdout: o.stdout, stderr: o.stderr, ...(file ? { file } : {}) };
}

/** The limit for simulate and report; null for the other commands, for no limit, or for a usage error the command reports itself. */
function timeLimitOf(args: string[]): number | null {
  const [command, ...rest] = args;
  if (command !== 'simulate' && command !== 'report') return null;
  const parsed = parseOptions(rest);
  if (parsed.error) return null;
  const limit = parseTimeLimit(parsed.options.get('time-limit'));
  return limit.ok && limit.seconds > 0 ? limit.seconds : null;
}

/**
 * A closed pipe on stdout or stderr (EPIPE) ends the output quietly: the reader has gone, and
 * what it did not read cannot be delivered. Any other write error is said on stderr, if it can be.
 */
function quietOnClosedPipe(): void {
  for (const stream of [process.stdout, process.stderr]) {
    stream.on('error', (e: NodeJS.ErrnoException) => {
      if (e.code === 'EPIPE') return;
      if (stream !== process.stderr) process.stderr.write(`cannot write the output: ${visibleText(e.message)}\n`);
      process.exitCode = 1;
    });
  }
}

async function main(): Promise<void> {
  tuneEngine();
  quietOnClosedPipe();
  const args = process.argv.slice(2);
  const folder = userFolder(process.env, process.cwd());
  let finished: Finished;
  try {
    const seconds = timeLimitOf(args);
    const population = args[0] === 'population' && !args.includes('--help') && !args.includes('-h');
    finished = args[0] === 'store' ? await runStore(args, folder) : args[0] === 'nca' ? await runNca(args, folder) : population ? await runPopulation(args, folder) : seconds === null ? await runInThread(args, folder) : await runInWorker(args, folder, seconds);
  } catch (e) {
    // A defect, not a user error: say so plainly, without a stack trace.
    process.stderr.write(`internal error: ${visibleText(e instanceof Error ? e.message : String(e))}\nPlease report this with the scenario file.\n`);
    process.exitCode = 1;
    return;
  }
  if (finished.file) {
    const written = writeFileAtomic(finished.file.path, finished.file.data);
    if (!written.ok) {
      const kept = written.existed ? '; the existing file was left unchanged' : '';
      process.stderr.write(`cannot write '${visibleText(finished.file.path)}': ${visibleText(written.reason)}${kept}\n`);
      process.exitCode = 1;
      return;
    }
  }
  process.stdout.write(finished.stdout);
  process.stderr.write(finished.stderr);
  process.exitCode = finished.code;
}

if (asProgram) await main();
