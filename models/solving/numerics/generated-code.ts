/**
 * Turning generated source into a function, in one place: the switch that turns code
 * generation off (tests and the benchmark compare both ways), and the guard for places
 * that forbid it (a page whose Content-Security-Policy has no 'unsafe-eval' throws an
 * EvalError). Callers build their source from numbers and indices only, never from user
 * text, and keep an interpreted path for when this returns null.
 */

let enabled = true;
/** Set once code generation has been refused here: later callers interpret without asking again. */
let refused = false;

/** Turns generated straight-line code on or off (and forgets an earlier refusal); off, every caller interprets. */
export function setCodeGeneration(on: boolean): void {
  enabled = on;
  refused = false;
}

export function codeGenerationEnabled(): boolean {
  return enabled;
}

/**
 * new Function(...params, source), or null when code generation is off or refused (an
 * EvalError). Any other error is a fault in the generated source and is thrown: falling
 * back quietly would hide it behind the interpreter.
 */
export function compileSource<F>(params: readonly string[], source: string): F | null {
  if (!enabled || refused) return null;
  try {
    return new Function(...params, source) as F;
  } catch (e) {
    if (!(e instanceof EvalError)) throw e;
    refused = true;
    return null;
  }
}

/** A number as a literal that parses back to the same double. */
export function literal(x: number): string {
  if (!Number.isFinite(x)) throw new RangeError(`non-finite coefficient ${x}`);
  if (Object.is(x, -0)) return '(-0)';
  const s = String(x);
  return x < 0 ? `(${s})` : s;
}

/** An array index, checked to be one. */
export function index(i: number): string {
  if (!Number.isInteger(i) || i < 0) throw new RangeError(`bad index ${i}`);
  return String(i);
}
