/**
 * `tidemark verify`: runs the reference cases (cases.ts) on this machine and gives the
 * record — one row per case with its largest error and verdict, Tidemark's version, Node's
 * version and the platform — as a table for the terminal and as JSON for a validation file.
 * A case passes when its largest error is within its tolerance; a case that cannot be
 * computed, or gives a value that is not a number, fails.
 */
import { readFileSync } from 'node:fs';
import { arch, platform, release } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { referenceCases, type Point, type ReferenceCase } from './cases.ts';

export type Verdict = 'pass' | 'FAIL';

export interface CaseRecord {
  id: string;
  name: string;
  source: string;
  /** The compared value with the largest error (or the only one). */
  quantity: string | null;
  expected: number | null;
  got: number | null;
  /** Largest error over the compared values (relative, or relative to the case's scale). */
  error: number | null;
  tolerance: number;
  /** How many values were compared. */
  compared: number;
  verdict: Verdict;
  /** Why a case failed without a comparison. */
  reason?: string;
}

export interface VerificationRecord {
  program: 'Tidemark';
  version: string;
  node: string;
  platform: string;
  /** ISO 8601, UTC. */
  time: string;
  seconds: number;
  passed: boolean;
  summary: string;
  note: string;
  cases: CaseRecord[];
}

export const verificationNote =
  'A check that this installed copy computes published reference cases correctly (the installation and operational ' +
  'qualification of common practice): a simulation check, not a clinical validation.';

function errorOf(p: Point): number {
  const scale = p.scale ?? Math.abs(p.expected);
  const diff = Math.abs(p.got - p.expected);
  return scale === 0 ? diff : diff / scale;
}

/** Runs one case; a throw is a defect, recorded as a failure with its message rather than stopping the others. */
export function runCase(c: ReferenceCase): CaseRecord {
  const base = { id: c.id, name: c.name, source: c.source, tolerance: c.tolerance };
  let outcome;
  try {
    outcome = c.run();
  } catch (e) {
    outcome = { ok: false as const, reason: `internal error: ${e instanceof Error ? e.message : String(e)}` };
  }
  if (!outcome.ok || outcome.points.length === 0) {
    const reason = outcome.ok ? 'nothing was compared' : outcome.reason;
    return { ...base, quantity: null, expected: null, got: null, error: null, compared: 0, verdict: 'FAIL', reason };
  }
  let worst = outcome.points[0];
  let error = errorOf(worst);
  for (const p of outcome.points) {
    const e = errorOf(p);
    // NaN is the worst of all: it never passes.
    if (Number.isNaN(e) || e > error) {
      worst = p;
      error = e;
      if (Number.isNaN(e)) break;
    }
  }
  const verdict: Verdict = Number.isFinite(error) && error <= c.tolerance ? 'pass' : 'FAIL';
  return { ...base, quantity: worst.quantity, expected: worst.expected, got: worst.got, error, compared: outcome.points.length, verdict };
}

/** Tidemark's version from its package.json, looked for upward from this file (the source tree or a built copy). */
export function tidemarkVersion(): string {
  let folder = dirname(fileURLToPath(import.meta.url));
  for (let i = 0; i < 6; i++) {
    try {
      const pkg = JSON.parse(readFileSync(join(folder, 'package.json'), 'utf8')) as { name?: unknown; version?: unknown };
      if (pkg.name === 'tidemark' && typeof pkg.version === 'string') return pkg.version;
    } catch {
      // no package.json here: one folder up
    }
    const parent = dirname(folder);
    if (parent === folder) break;
    folder = parent;
  }
  return 'unknown';
}

/** Runs the cases (all reference cases unless a list is given) and returns the record. */
export function verify(cases: ReferenceCase[] = referenceCases, now: () => number = Date.now): VerificationRecord {
  const started = now();
  const records = cases.map(runCase);
  const failed = records.filter((r) => r.verdict !== 'pass').length;
  return {
    program: 'Tidemark',
    version: tidemarkVersion(),
    node: process.version,
    platform: `${platform()} ${release()} ${arch()}`,
    time: new Date(started).toISOString(),
    seconds: (now() - started) / 1000,
    passed: failed === 0,
    summary: failed === 0 ? `all ${records.length} cases passed` : `${failed} of ${records.length} cases FAILED`,
    note: verificationNote,
    cases: records,
  };
}

const number = (x: number | null) => (x === null ? '—' : Number.isNaN(x) ? 'NaN' : x.toPrecision(12).replace(/\.?0+(e|$)/, '$1'));
const small = (x: number | null) => (x === null ? '—' : Number.isNaN(x) ? 'NaN' : x === 0 ? '0' : x.toExponential(1));

/** The record as a table for the terminal. */
export function verificationTable(record: VerificationRecord): string {
  const header = ['case', 'source', 'expected', 'got', 'error', 'tolerance', 'verdict'];
  const rows = record.cases.map((c) => [
    c.quantity ? `${c.id}: ${c.quantity}` : c.id,
    c.source,
    number(c.expected),
    number(c.got),
    small(c.error),
    small(c.tolerance),
    c.verdict,
  ]);
  const widths = header.map((h, i) => Math.max(h.length, ...rows.map((r) => r[i].length)));
  const numeric = [false, false, true, true, true, true, false];
  const line = (cells: string[]) =>
    cells
      .map((cell, i) => (numeric[i] ? cell.padStart(widths[i]) : cell.padEnd(widths[i])))
      .join('  ')
      .trimEnd();
  const reasons = record.cases.filter((c) => c.reason).map((c) => `  ${c.id}: ${c.reason}`);
  return [
    `Tidemark ${record.version} verification — Node ${record.node}, ${record.platform}, ${record.time}`,
    '',
    line(header),
    line(widths.map((w) => '-'.repeat(w))),
    ...rows.map(line),
    '',
    ...(reasons.length > 0 ? ['Not compared:', ...reasons, ''] : []),
    'error: the largest over the compared values (relative; the two-compartment amounts relative to the larger amount at each time);',
    'expected/got: the value with that error. Every expected value is computed independently of the engine.',
    `${record.summary} in ${record.seconds.toFixed(1)} s.`,
    record.note,
  ].join('\n') + '\n';
}
