/**
 * The API client. Every answer becomes a plain outcome the page can show in words; no
 * exception object or server text other than the listed problems reaches the user.
 */
import type { SimulationResultJson } from '../../models/result/result-format.ts';
import type { Problem } from '../../models/scenario/problems.ts';
import { blankCellProblems } from './covariate-table-model.ts';

export type { Problem };

export type SimulateOutcome =
  | { kind: 'ok'; result: SimulationResultJson; recorded: string | null }
  | { kind: 'invalid'; problems: Problem[] }
  | { kind: 'failed'; problems: Problem[] }
  | { kind: 'message'; text: string }
  | { kind: 'aborted' };

export interface SampleInfo {
  id: string;
  title: string;
  description: string;
}

function isProblemList(v: unknown): v is { problems: Problem[] } {
  if (typeof v !== 'object' || v === null) return false;
  const p = (v as { problems?: unknown }).problems;
  return Array.isArray(p) && p.every((x) => typeof x === 'object' && x !== null && typeof (x as Problem).message === 'string');
}

/** What an error answer from the API means for the user, for a run or a report. */
export type Failure = { kind: 'invalid'; problems: Problem[] } | { kind: 'failed'; problems: Problem[] } | { kind: 'message'; text: string };

export function failureOf(status: number, body: unknown, action: 'run' | 'report'): Failure {
  const problems = problemsOf(body);
  switch (status) {
    case 400:
      return problems.length ? { kind: 'invalid', problems } : { kind: 'message', text: 'The server did not accept the scenario.' };
    case 422:
      return { kind: 'failed', problems: problems.length ? problems : [{ path: '', message: 'The computation did not finish.' }] };
    case 413:
      return { kind: 'message', text: 'The scenario is too large for the server to accept. Shorten it (fewer dose lines or output times) and try again.' };
    case 503:
      return { kind: 'message', text: 'The server is busy with other simulations. Wait a moment and try again.' };
    default:
      return { kind: 'message', text: `The server could not ${action === 'run' ? 'complete the run' : 'make the report'} (status ${status}). Try again in a moment.` };
  }
}

/**
 * What the page refuses itself before sending, as a 400 would read, so the problems go beside
 * their fields the same way: an empty covariate cell is never sent. Null: send it.
 */
export function refusedBeforeSending(scenario: unknown): Failure | null {
  const problems = blankCellProblems(scenario);
  return problems.length > 0 ? { kind: 'invalid', problems } : null;
}

function problemsOf(v: unknown): Problem[] {
  if (!isProblemList(v)) return [];
  return v.problems.map((p) => ({ path: typeof p.path === 'string' ? p.path : '', message: p.message }));
}

function isResult(v: unknown): v is SimulationResultJson {
  if (typeof v !== 'object' || v === null) return false;
  const r = v as Partial<SimulationResultJson>;
  return Array.isArray(r.times) && typeof r.compartments === 'object' && typeof r.metrics === 'object' && typeof r.diagnostics === 'object' && typeof r.units === 'object';
}

async function readJson(res: Response): Promise<unknown> {
  try {
    return await res.json();
  } catch {
    return null;
  }
}

const unreachable = 'The Tidemark server could not be reached. Check that it is running, then try again.';

/**
 * Posts a run. With `record` (the stored scenario and version the scenario on screen equals
 * exactly) the library records the run; `recorded` is the server's X-Tidemark-Run answer.
 */
export async function simulate(scenario: unknown, signal: AbortSignal, record?: { id: number; version: number }): Promise<SimulateOutcome> {
  const refused = refusedBeforeSending(scenario);
  if (refused) return refused;
  let res: Response;
  const query = record ? `?${new URLSearchParams({ scenario: String(record.id), version: String(record.version) })}` : '';
  try {
    res = await fetch(`api/simulate${query}`, {
      method: 'POST',
      headers: { 'content-type': 'application/json', accept: 'application/json' },
      body: JSON.stringify(scenario),
      signal,
    });
  } catch {
    return signal.aborted ? { kind: 'aborted' } : { kind: 'message', text: unreachable };
  }
  const body = await readJson(res);
  if (signal.aborted) return { kind: 'aborted' };
  if (res.status === 200) {
    return isResult(body) ? { kind: 'ok', result: body, recorded: res.headers.get('x-tidemark-run') } : { kind: 'message', text: 'The server sent an answer the page could not read. Try again; if it persists, restart the server.' };
  }
  return failureOf(res.status, body, 'run');
}

export async function fetchSamples(): Promise<SampleInfo[] | null> {
  try {
    const res = await fetch('api/samples', { headers: { accept: 'application/json' } });
    if (!res.ok) return null;
    const body = await readJson(res);
    if (!Array.isArray(body)) return null;
    return body.filter((s): s is SampleInfo => typeof s === 'object' && s !== null && typeof (s as SampleInfo).id === 'string').map((s) => ({ id: s.id, title: String(s.title ?? s.id), description: String(s.description ?? '') }));
  } catch {
    return null;
  }
}

export async function fetchSample(id: string): Promise<unknown> {
  try {
    const res = await fetch(`api/samples/${encodeURIComponent(id)}`, { headers: { accept: 'application/json' } });
    if (!res.ok) return null;
    return await readJson(res);
  } catch {
    return null;
  }
}

export { unreachable };
