/**
 * The scenario store's HTTP API, as plain outcomes: a value, or the status with the problems
 * and a sentence the page can show. No exception or raw server text reaches the user.
 */
// Types only (erased from the bundle): the shapes are the server's, written once.
import type { Change } from '../../models/scenario/diff.ts';
import type { ReportInfo, RunInfo, ScenarioSummary, StoreStatus, VersionInfo } from '../../server/store/records.ts';
import { unreachable, type Problem } from './api.ts';
import type { ScenarioDoc } from './store.ts';

export type { Change } from '../../models/scenario/diff.ts';
export type { ReportInfo, RunInfo, ScenarioSummary, StoreStatus, VersionInfo } from '../../server/store/records.ts';

export interface StoredScenario extends ScenarioSummary {
  version: VersionInfo;
  scenario: ScenarioDoc;
}

export interface Saved {
  id: number;
  version: number;
  fingerprint: string;
}

export type Answer<T> = { ok: true; value: T } | { ok: false; status: number; problems: Problem[]; message: string; latestVersion?: number };

function problemsOf(body: unknown): Problem[] {
  const list = typeof body === 'object' && body !== null ? (body as { problems?: unknown }).problems : undefined;
  if (!Array.isArray(list)) return [];
  return list
    .filter((p): p is { path?: unknown; message: string } => typeof p === 'object' && p !== null && typeof (p as { message?: unknown }).message === 'string')
    .map((p) => ({ path: typeof p.path === 'string' ? p.path : '', message: p.message }));
}

function messageOf(status: number, problems: Problem[]): string {
  if (problems.length) return problems.map((p) => p.message).join(' ');
  if (status === 404) return 'That scenario is not in the library.';
  if (status === 413) return 'The scenario is too large for the library to accept.';
  return `The library could not do that (status ${status}). Try again in a moment.`;
}

async function call<T>(method: string, url: string, body?: unknown): Promise<Answer<T>> {
  let res: Response;
  try {
    res = await fetch(url, {
      method,
      headers: body === undefined ? { accept: 'application/json' } : { accept: 'application/json', 'content-type': 'application/json' },
      body: body === undefined ? undefined : JSON.stringify(body),
    });
  } catch {
    return { ok: false, status: 0, problems: [], message: unreachable };
  }
  let json: unknown = null;
  try {
    json = await res.json();
  } catch {
    json = null;
  }
  if (res.ok && json !== null) return { ok: true, value: json as T };
  const problems = problemsOf(json);
  const latest = typeof json === 'object' && json !== null ? (json as { latestVersion?: unknown }).latestVersion : undefined;
  return { ok: false, status: res.status, problems, message: messageOf(res.status, problems), latestVersion: typeof latest === 'number' ? latest : undefined };
}

const id = (n: number) => encodeURIComponent(String(n));

export const storeStatus = () => call<StoreStatus>('GET', 'api/store');

export function listScenarios(search: string, deleted: 'exclude' | 'include' | 'only'): Promise<Answer<{ scenarios: ScenarioSummary[]; total: number }>> {
  const q = new URLSearchParams({ search, deleted, limit: '100', offset: '0' });
  return call('GET', `api/scenarios?${q}`);
}

export const getScenario = (sid: number) => call<StoredScenario>('GET', `api/scenarios/${id(sid)}`);

export interface CreateBody {
  scenario: unknown;
  note?: string;
  name?: string;
  tags?: string[];
  notes?: string;
  author?: string;
}
export const createScenario = (body: CreateBody) => call<Saved>('POST', 'api/scenarios', body);

export const saveVersion = (sid: number, body: { scenario: unknown; baseVersion: number; note?: string; author?: string }) => call<Saved>('PUT', `api/scenarios/${id(sid)}`, body);

export const deleteScenario = (sid: number) => call<{ id: number; deleted: true }>('DELETE', `api/scenarios/${id(sid)}`);
export const restoreScenario = (sid: number) => call<{ id: number; deleted: false }>('POST', `api/scenarios/${id(sid)}/restore`, {});

export const listVersions = (sid: number) => call<{ versions: VersionInfo[] }>('GET', `api/scenarios/${id(sid)}/versions`);
export const getVersion = (sid: number, v: number) => call<VersionInfo & { scenario: ScenarioDoc }>('GET', `api/scenarios/${id(sid)}/versions/${v}`);
export const getDiff = (sid: number, from: number, to: number) => call<{ from: number; to: number; changes: Change[] }>('GET', `api/scenarios/${id(sid)}/diff?from=${from}&to=${to}`);
export const listRuns = (sid: number) => call<{ runs: RunInfo[] }>('GET', `api/scenarios/${id(sid)}/runs`);
export const listReports = (sid: number) => call<{ reports: ReportInfo[] }>('GET', `api/scenarios/${id(sid)}/reports`);
export const reportPdfUrl = (rid: number) => `api/reports/${id(rid)}/pdf`;

/** The query that makes a simulation or a report count for a stored version. */
export function recordQuery(target: { id: number; version: number }, by?: string): string {
  const q = new URLSearchParams({ scenario: String(target.id), version: String(target.version) });
  if (by) q.set('by', by);
  return q.toString();
}
