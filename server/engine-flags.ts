/**
 * One setting of the JavaScript engine (V8) for the simulator's processes, made once at start.
 *
 * V8's optimising compiler writes Array.prototype.map, filter and the like inline, and the
 * arrays the inlined code makes are of another internal kind ("holey") than those the
 * unoptimised code made before ("packed"). Code already optimised for the one kind is thrown
 * away when it first meets the other and must warm up again. In a population run each subject
 * builds its model afresh, so every time a builder gets optimised a cascade follows: measured
 * on 1,000 subjects of the benchmark's population, 36 functions thrown away ("wrong map") in
 * the first 1,500 subjects, against 3 with the inlining off, and the subjects reached their
 * warm speed after about 400 rather than 700. End to end (a year of hourly bands, one thread,
 * seven runs each, interleaved): median 0.77 s against 0.92 s. The fit and the single-subject
 * benchmark do not get slower (the README's Speed section has the figures).
 *
 * Set in the process before any of the engine's code is optimised: the server and the command
 * line call tuneEngine() first, and worker threads share the process's setting. A flag this
 * Node's V8 did not know would print an "unrecognized flag" error line; a test checks that it knows each.
 */
import { setFlagsFromString } from 'node:v8';

export const ENGINE_FLAGS = ['--no-turbo-inline-array-builtins'] as const;

let tuned = false;

/** Applies ENGINE_FLAGS once per process (later calls do nothing). */
export function tuneEngine(): void {
  if (tuned) return;
  tuned = true;
  for (const flag of ENGINE_FLAGS) setFlagsFromString(flag);
}
