/**
 * The command line's computation in a worker thread, so that the program can stop it at the
 * time limit (a worker can be terminated in the middle of a loop; the main thread cannot
 * interrupt itself). Answers `ready` once the engine, and what the command named in
 * workerData needs beyond it (the report writer for report), is loaded, then one outcome per job.
 */
import { parentPort, workerData } from 'node:worker_threads';
import { loadCommandModules, runCli, type CliOutcome } from './cli-commands.ts';

/** An outcome as it crosses threads: the text already as bytes, moved rather than copied. */
export interface WorkerOutcome {
  code: number;
  stdout: Uint8Array;
  stderr: string;
  file?: { path: string; bytes: Uint8Array };
}

function toMessage(o: CliOutcome): { message: WorkerOutcome; transfer: ArrayBuffer[] } {
  const encoder = new TextEncoder();
  const stdout = encoder.encode(o.stdout);
  // A copy with a buffer of its own (a Buffer may be a view into a shared pool).
  const file = o.file ? { path: o.file.path, bytes: encoder.encode(o.file.text) } : o.binaryFile ? { path: o.binaryFile.path, bytes: new Uint8Array(o.binaryFile.bytes) } : undefined;
  const transfer = [stdout.buffer as ArrayBuffer, ...(file ? [file.bytes.buffer as ArrayBuffer] : [])];
  return { message: { code: o.code, stdout, stderr: o.stderr, ...(file ? { file } : {}) }, transfer };
}

parentPort?.on('message', ({ args, folder }: { args: string[]; folder: string }) => {
  let outcome: CliOutcome;
  try {
    outcome = runCli(args, { folder });
  } catch (e) {
    // A defect, not a user error: say so plainly, without a stack trace.
    outcome = { code: 1, stdout: '', stderr: `internal error: ${e instanceof Error ? e.message : String(e)}\nPlease report this with the scenario file.\n` };
  }
  const { message, transfer } = toMessage(outcome);
  parentPort?.postMessage(message, transfer);
});

/** What cli.ts tells the worker at its start: the command it will run. */
export interface CliWorkerData {
  command: string;
}

// Loaded before `ready`, so that the time limit, which starts then, counts the computation alone.
await loadCommandModules([(workerData as CliWorkerData | null)?.command ?? '']);
parentPort?.postMessage({ ready: true });
