/**
 * Runs of stored versions: when, by which method, how long, the key figures and warnings.
 * The full result is kept gzip-compressed and read only on request.
 */
import { gunzipSync, gzipSync } from 'node:zlib';
import type { Db } from './open.ts';
import type { RunInfo } from './records.ts';

export interface RunRecord {
  scenarioId: number;
  version: number;
  method: string;
  startedAt: string;
  durationMs: number;
  figures: Record<string, unknown>;
  warnings: string[];
  /** The result's JSON text, kept compressed. */
  resultJson?: string;
}

interface RunRow {
  id: number;
  scenario_id: number;
  version: number;
  method: string;
  started_at: string;
  duration_ms: number;
  figures: string;
  warnings: string;
}

const runColumns = 'id, scenario_id, version, method, started_at, duration_ms, figures, warnings';

function runOf(row: RunRow): RunInfo {
  return {
    id: row.id,
    scenarioId: row.scenario_id,
    version: row.version,
    method: row.method,
    startedAt: row.started_at,
    durationMs: row.duration_ms,
    figures: JSON.parse(row.figures) as Record<string, unknown>,
    warnings: JSON.parse(row.warnings) as string[],
  };
}

export function recordRun(db: Db, run: RunRecord): number {
  const blob = run.resultJson === undefined ? null : gzipSync(Buffer.from(run.resultJson, 'utf8'));
  return db.transaction(() =>
    Number(
      db
        .prepare('INSERT INTO runs (scenario_id, version, method, started_at, duration_ms, figures, warnings, result) VALUES (?, ?, ?, ?, ?, ?, ?, ?)')
        .run(run.scenarioId, run.version, run.method, run.startedAt, run.durationMs, JSON.stringify(run.figures), JSON.stringify(run.warnings), blob).lastInsertRowid,
    ),
  ).immediate();
}

export function listRuns(db: Db, scenarioId: number, limit = 200): RunInfo[] {
  return (db.prepare(`SELECT ${runColumns} FROM runs WHERE scenario_id = ? ORDER BY id DESC LIMIT ?`).all(scenarioId, limit) as RunRow[]).map(runOf);
}

/** One run with its full result (null when the result was not kept). */
export function readRun(db: Db, id: number): (RunInfo & { result: unknown }) | null {
  const row = db.prepare(`SELECT ${runColumns}, result FROM runs WHERE id = ?`).get(id) as (RunRow & { result: Buffer | null }) | undefined;
  if (!row) return null;
  return { ...runOf(row), result: row.result ? (JSON.parse(gunzipSync(row.result).toString('utf8')) as unknown) : null };
}
