/**
 * The population routes of the API, as plain outcomes the page shows in words: start a run,
 * ask how it goes, cancel it. The result's type is the engine's own (models/population/summary.ts).
 */
import type { PopulationResult } from '../../models/population/summary.ts';
import { failureOf, refusedBeforeSending, unreachable, type Failure, type Problem } from './api.ts';

export type StartOutcome = { kind: 'started'; id: string } | Failure;

export type PollOutcome =
  | { kind: 'running'; done: number; total: number }
  | { kind: 'done'; result: PopulationResult }
  | { kind: 'failed'; problems: Problem[] }
  | { kind: 'cancelled' }
  | { kind: 'message'; text: string };

async function readJson(res: Response): Promise<unknown> {
  try {
    return await res.json();
  } catch {
    return null;
  }
}

function problemsIn(body: unknown): Problem[] {
  const p = (body as { problems?: unknown } | null)?.problems;
  return Array.isArray(p) ? p.filter((x): x is Problem => typeof x === 'object' && x !== null && typeof (x as Problem).message === 'string').map((x) => ({ path: typeof x.path === 'string' ? x.path : '', message: x.message })) : [];
}

export async function startPopulation(scenario: unknown): Promise<StartOutcome> {
  const refused = refusedBeforeSending(scenario);
  if (refused) return refused;
  let res: Response;
  try {
    res = await fetch('api/population', {
      method: 'POST',
      headers: { 'content-type': 'application/json', accept: 'application/json' },
      body: JSON.stringify({ scenario }),
    });
  } catch {
    return { kind: 'message', text: unreachable };
  }
  const body = await readJson(res);
  if (res.status === 202 && typeof (body as { id?: unknown } | null)?.id === 'string') return { kind: 'started', id: (body as { id: string }).id };
  // The server says why it is busy (another population running); its words are clearer than a generic one.
  if (res.status === 503 && problemsIn(body).length) return { kind: 'message', text: `${problemsIn(body)[0].message}.` };
  return failureOf(res.status, body, 'run');
}

function isResult(v: unknown): v is PopulationResult {
  if (typeof v !== 'object' || v === null) return false;
  const r = v as Partial<PopulationResult>;
  return Array.isArray(r.times) && typeof r.bands === 'object' && Array.isArray(r.attainment) && Array.isArray(r.percentiles) && typeof r.units === 'object';
}

export async function pollPopulation(id: string): Promise<PollOutcome> {
  let res: Response;
  try {
    res = await fetch(`api/population/${encodeURIComponent(id)}`, { headers: { accept: 'application/json' }, cache: 'no-store' });
  } catch {
    return { kind: 'message', text: unreachable };
  }
  const body = (await readJson(res)) as { state?: string; done?: number; total?: number; result?: unknown } | null;
  if (res.status !== 200 || body === null) {
    return { kind: 'message', text: problemsIn(body)[0]?.message ?? `The server could not say how the population run goes (status ${res.status}).` };
  }
  switch (body.state) {
    case 'running':
      return { kind: 'running', done: Number(body.done ?? 0), total: Number(body.total ?? 0) };
    case 'done':
      return isResult(body.result) ? { kind: 'done', result: body.result } : { kind: 'message', text: 'The server sent a population result the page could not read.' };
    case 'failed':
      return { kind: 'failed', problems: problemsIn(body) };
    case 'cancelled':
      return { kind: 'cancelled' };
    default:
      return { kind: 'message', text: 'The server sent an answer the page could not read.' };
  }
}

export async function cancelPopulation(id: string): Promise<void> {
  try {
    await fetch(`api/population/${encodeURIComponent(id)}`, { method: 'DELETE', headers: { accept: 'application/json' } });
  } catch {
    // The run ends by itself within the server's time budget; nothing more to do here.
  }
}
