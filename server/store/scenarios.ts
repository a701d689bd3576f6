/**
 * Scenarios and their versions. A version is never changed once written; a save adds the
 * next one in the same transaction that checks the edit started from the latest (two tabs
 * saving the same scenario cannot overwrite each other) and updates the scenario's row.
 * Every statement is parameterised.
 */
import { scenarioFingerprint } from '../../models/scenario/fingerprint.ts';
import type { Db } from './open.ts';
import type { Metadata, ScenarioSummary, VersionInfo } from './records.ts';
import { clipText, storeLimits } from './records.ts';

export type StoreOutcome<T> = { ok: true; value: T } | { ok: false; status: 404 | 409 | 413; path: string; message: string; latestVersion?: number };

interface ScenarioRow {
  id: number;
  name: string;
  tags: string;
  notes: string;
  created_at: string;
  deleted_at: string | null;
  latest_version: number;
  updated_at: string;
  latest_fingerprint: string;
  latest_author: string;
}

interface VersionRow {
  version: number;
  fingerprint: string;
  note: string;
  author: string;
  saved_at: string;
  bytes: number;
}

const summaryColumns = 'id, name, tags, notes, created_at, deleted_at, latest_version, updated_at, latest_fingerprint, latest_author';
const versionColumns = 'version, fingerprint, note, author, saved_at, length(CAST(scenario_json AS BLOB)) AS bytes';

function summaryOf(row: ScenarioRow): ScenarioSummary {
  return {
    id: row.id,
    name: row.name,
    tags: JSON.parse(row.tags) as string[],
    notes: row.notes,
    created: row.created_at,
    updated: row.updated_at,
    latestVersion: row.latest_version,
    fingerprint: row.latest_fingerprint,
    author: row.latest_author,
    deleted: row.deleted_at !== null,
  };
}

function versionOf(row: VersionRow): VersionInfo {
  return { version: row.version, fingerprint: row.fingerprint, note: row.note, author: row.author, savedAt: row.saved_at, bytes: row.bytes };
}

/** Name and tags folded for the search: lower case, Unicode-aware (SQLite's own folding is ASCII only). */
export function searchTextOf(name: string, tags: readonly string[]): string {
  return [name, ...tags].join('\n').toLocaleLowerCase('und');
}

/** The JSON text kept for a version: the value as received, without re-ordering. */
function jsonTextOf(scenario: unknown): StoreOutcome<string> {
  const text = JSON.stringify(scenario);
  if (text === undefined) return { ok: false, status: 413, path: 'scenario', message: 'there is no scenario to save' };
  if (text.length > storeLimits.scenarioChars) {
    return { ok: false, status: 413, path: 'scenario', message: `the scenario's JSON is ${text.length} characters; the store keeps at most ${storeLimits.scenarioChars}` };
  }
  return { ok: true, value: text };
}

const titleOf = (scenario: unknown): string => {
  const t = typeof scenario === 'object' && scenario !== null ? (scenario as { title?: unknown }).title : undefined;
  return typeof t === 'string' && t.trim() ? clipText(t.trim(), storeLimits.name) : 'Untitled scenario';
};

export interface SaveInput {
  scenario: unknown;
  note?: string;
  author?: string;
}

export interface Saved {
  id: number;
  version: number;
  fingerprint: string;
}

/** A new scenario with its first version. */
export function createScenario(db: Db, input: SaveInput & Metadata, now = new Date()): StoreOutcome<Saved> {
  const json = jsonTextOf(input.scenario);
  if (!json.ok) return json;
  const at = now.toISOString();
  const name = input.name ?? titleOf(input.scenario);
  const tags = input.tags ?? [];
  const fingerprint = scenarioFingerprint(input.scenario);
  const author = input.author ?? '';
  const id = db.transaction(() => {
    const row = db
      .prepare(
        `INSERT INTO scenarios (name, tags, notes, created_at, latest_version, updated_at, latest_fingerprint, latest_author, search_text)
         VALUES (?, ?, ?, ?, 1, ?, ?, ?, ?)`,
      )
      .run(name, JSON.stringify(tags), input.notes ?? '', at, at, fingerprint, author, searchTextOf(name, tags));
    const newId = Number(row.lastInsertRowid);
    db.prepare('INSERT INTO versions (scenario_id, version, scenario_json, fingerprint, note, author, saved_at) VALUES (?, 1, ?, ?, ?, ?, ?)').run(
      newId,
      json.value,
      fingerprint,
      input.note ?? '',
      author,
      at,
    );
    return newId;
  }).immediate();
  return { ok: true, value: { id, version: 1, fingerprint } };
}

/** The next version of a scenario, when the edit started from its latest version. */
export function saveVersion(db: Db, id: number, input: SaveInput & { baseVersion: number }, now = new Date()): StoreOutcome<Saved> {
  const json = jsonTextOf(input.scenario);
  if (!json.ok) return json;
  const fingerprint = scenarioFingerprint(input.scenario);
  const at = now.toISOString();
  const author = input.author ?? '';
  return db.transaction((): StoreOutcome<Saved> => {
    const row = db.prepare('SELECT latest_version FROM scenarios WHERE id = ?').get(id) as { latest_version: number } | undefined;
    if (!row) return { ok: false, status: 404, path: '', message: `there is no scenario ${id}` };
    if (row.latest_version !== input.baseVersion) {
      return {
        ok: false,
        status: 409,
        path: 'baseVersion',
        message: `version ${row.latest_version} was saved after version ${input.baseVersion}, which this edit started from (another tab or person saved first); open the latest version, or save this as a new scenario`,
        latestVersion: row.latest_version,
      };
    }
    const version = row.latest_version + 1;
    db.prepare('INSERT INTO versions (scenario_id, version, scenario_json, fingerprint, note, author, saved_at) VALUES (?, ?, ?, ?, ?, ?, ?)').run(
      id,
      version,
      json.value,
      fingerprint,
      input.note ?? '',
      author,
      at,
    );
    db.prepare('UPDATE scenarios SET latest_version = ?, updated_at = ?, latest_fingerprint = ?, latest_author = ? WHERE id = ?').run(version, at, fingerprint, author, id);
    return { ok: true, value: { id, version, fingerprint } };
  }).immediate();
}

/** Name, tags or notes changed; no new version (they describe the scenario, not its content). */
export function updateMetadata(db: Db, id: number, change: Metadata): StoreOutcome<ScenarioSummary> {
  return db.transaction((): StoreOutcome<ScenarioSummary> => {
    const row = db.prepare(`SELECT ${summaryColumns} FROM scenarios WHERE id = ?`).get(id) as ScenarioRow | undefined;
    if (!row) return { ok: false, status: 404, path: '', message: `there is no scenario ${id}` };
    const name = change.name ?? row.name;
    const tags = change.tags ?? (JSON.parse(row.tags) as string[]);
    const notes = change.notes ?? row.notes;
    db.prepare('UPDATE scenarios SET name = ?, tags = ?, notes = ?, search_text = ? WHERE id = ?').run(name, JSON.stringify(tags), notes, searchTextOf(name, tags), id);
    return { ok: true, value: summaryOf({ ...row, name, tags: JSON.stringify(tags), notes }) };
  }).immediate();
}

/** Soft delete (deleted = true) or restore (false). */
export function setDeleted(db: Db, id: number, deleted: boolean, now = new Date()): StoreOutcome<{ id: number; deleted: boolean }> {
  const changed = db.prepare('UPDATE scenarios SET deleted_at = ? WHERE id = ?').run(deleted ? now.toISOString() : null, id);
  if (changed.changes === 0) return { ok: false, status: 404, path: '', message: `there is no scenario ${id}` };
  return { ok: true, value: { id, deleted } };
}

export interface ListQuery {
  search?: string;
  deleted?: 'exclude' | 'include' | 'only';
  limit?: number;
  offset?: number;
}

/** Scenarios, newest update first, with the count of all that match. */
export function listScenarios(db: Db, query: ListQuery = {}): { scenarios: ScenarioSummary[]; total: number } {
  const where: string[] = [];
  const params: (string | number)[] = [];
  const deleted = query.deleted ?? 'exclude';
  if (deleted === 'exclude') where.push('deleted_at IS NULL');
  if (deleted === 'only') where.push('deleted_at IS NOT NULL');
  const search = (query.search ?? '').trim().toLocaleLowerCase('und');
  if (search) {
    where.push('instr(search_text, ?) > 0');
    params.push(search);
  }
  const clause = where.length ? `WHERE ${where.join(' AND ')}` : '';
  const limit = Math.max(0, Math.min(query.limit ?? 100, storeLimits.listPage));
  const offset = Math.max(0, query.offset ?? 0);
  const rows = db.prepare(`SELECT ${summaryColumns} FROM scenarios ${clause} ORDER BY updated_at DESC, id DESC LIMIT ? OFFSET ?`).all(...params, limit, offset) as ScenarioRow[];
  const total = (db.prepare(`SELECT count(*) AS n FROM scenarios ${clause}`).get(...params) as { n: number }).n;
  return { scenarios: rows.map(summaryOf), total };
}

export function scenarioSummary(db: Db, id: number): ScenarioSummary | null {
  const row = db.prepare(`SELECT ${summaryColumns} FROM scenarios WHERE id = ?`).get(id) as ScenarioRow | undefined;
  return row ? summaryOf(row) : null;
}

export function listVersions(db: Db, id: number): VersionInfo[] {
  return (db.prepare(`SELECT ${versionColumns} FROM versions WHERE scenario_id = ? ORDER BY version DESC`).all(id) as VersionRow[]).map(versionOf);
}

/** One version with its scenario (parsed from the text as saved); the latest when `version` is omitted. */
export function readVersion(db: Db, id: number, version?: number): (VersionInfo & { scenario: unknown; json: string }) | null {
  const row = (
    version === undefined
      ? db.prepare(`SELECT ${versionColumns}, scenario_json FROM versions WHERE scenario_id = ? ORDER BY version DESC LIMIT 1`).get(id)
      : db.prepare(`SELECT ${versionColumns}, scenario_json FROM versions WHERE scenario_id = ? AND version = ?`).get(id, version)
  ) as (VersionRow & { scenario_json: string }) | undefined;
  if (!row) return null;
  return { ...versionOf(row), scenario: JSON.parse(row.scenario_json) as unknown, json: row.scenario_json };
}

/** The versions whose scenario has this fingerprint (a report's fingerprint finds the version that produced it). */
export function versionsWithFingerprint(db: Db, fingerprint: string): (VersionInfo & { scenarioId: number; name: string })[] {
  const rows = db
    .prepare(
      `SELECT v.scenario_id AS scenarioId, s.name AS name, v.version, v.fingerprint, v.note, v.author, v.saved_at, length(CAST(v.scenario_json AS BLOB)) AS bytes
       FROM versions v JOIN scenarios s ON s.id = v.scenario_id WHERE v.fingerprint = ? ORDER BY v.saved_at`,
    )
    .all(fingerprint) as (VersionRow & { scenarioId: number; name: string })[];
  return rows.map((r) => ({ scenarioId: r.scenarioId, name: r.name, ...versionOf(r) }));
}
