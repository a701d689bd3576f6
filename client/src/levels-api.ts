/**
 * The measured levels' API calls: NCA, a fit and regimen proposals, each a POST of the scenario
 * on screen. Answers become plain outcomes as in api.ts (problems by path for a 400, the
 * computation's problems for a 422); the result types are the core's, imported as types only.
 */
import type { ScenarioNca } from '../../models/levels/nca-scenario.ts';
import type { FitResult } from '../../models/fitting/result.ts';
import type { ProposeResult } from '../../models/regimen/propose.ts';
import { failureOf, refusedBeforeSending, unreachable, type Failure } from './api.ts';

/** The fit as the API answers it: the result and the server's caution. */
export type FitAnswer = FitResult & { caution: string };

export type LevelsOutcome<T> = { kind: 'ok'; value: T } | Failure | { kind: 'aborted' };

/** What each route answers; a shape check keeps an unreadable answer from reaching the views. */
const readers = {
  nca: (v: unknown): v is ScenarioNca => isObject(v) && Array.isArray(v.profiles) && isObject(v.units),
  fit: (v: unknown): v is FitAnswer => isObject(v) && isObject(v.estimates) && Array.isArray(v.predictions) && typeof v.objective === 'number',
  propose: (v: unknown): v is ProposeResult => isObject(v) && Array.isArray(v.proposals) && isObject(v.units),
};

function isObject(v: unknown): v is Record<string, unknown> {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

async function post<T>(route: string, scenario: unknown, signal: AbortSignal, ok: (v: unknown) => v is T): Promise<LevelsOutcome<T>> {
  const refused = refusedBeforeSending(scenario);
  if (refused) return refused;
  let res: Response;
  try {
    res = await fetch(route, { method: 'POST', headers: { 'content-type': 'application/json', accept: 'application/json' }, body: JSON.stringify(scenario), signal });
  } catch {
    return signal.aborted ? { kind: 'aborted' } : { kind: 'message', text: unreachable };
  }
  let body: unknown = null;
  try {
    body = await res.json();
  } catch {
    body = null;
  }
  if (signal.aborted) return { kind: 'aborted' };
  if (res.status === 200) return ok(body) ? { kind: 'ok', value: body } : { kind: 'message', text: 'The server sent an answer the page could not read. Try again; if it persists, restart the server.' };
  return failureOf(res.status, body, 'run');
}

/** Non-compartmental figures of the scenario's observations; `rule` "linear" for the linear trapezoidal rule. */
export function postNca(scenario: unknown, signal: AbortSignal, rule: 'log-down' | 'linear' = 'log-down'): Promise<LevelsOutcome<ScenarioNca>> {
  return post(`api/nca${rule === 'linear' ? '?rule=linear' : ''}`, scenario, signal, readers.nca);
}

/** A fit of the scenario's `fit.estimate` to its observations (objective and weighting from `fit`). */
export function postFit(scenario: unknown, signal: AbortSignal): Promise<LevelsOutcome<FitAnswer>> {
  return post('api/fit', scenario, signal, readers.fit);
}

/** Regimen proposals from the scenario's `propose` block. */
export function postPropose(scenario: unknown, signal: AbortSignal): Promise<LevelsOutcome<ProposeResult>> {
  return post('api/propose', scenario, signal, readers.propose);
}
