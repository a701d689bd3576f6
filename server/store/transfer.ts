/**
 * Moving whole scenarios between stores: reading them into the export format
 * (transfer-format.ts) and adding such a file's scenarios to a store. Database work only;
 * the command line (cli.ts beside this file) reads and writes the files.
 *
 * An import adds every scenario of the file as a new scenario (ids are the receiving
 * store's own), with all its versions under their numbers, times, authors and notes, its runs
 * (without full results, which exports do not carry) and its issued reports, in one
 * transaction: a file that fails its check, or a statement that fails half-way, adds nothing.
 */
import type { Problem } from '../../models/scenario/problems.ts';
import type { Db } from './open.ts';
import { searchTextOf } from './scenarios.ts';
import { checkStoreExport, storeExportFormat, type ExportedScenario, type StoreExport } from './transfer-format.ts';

interface ScenarioRow {
  id: number;
  name: string;
  tags: string;
  notes: string;
  created_at: string;
  deleted_at: string | null;
}

/** Scenarios read into the export format: those named by `ids` in that order, else all (deleted ones too), oldest first. */
export function exportScenarios(db: Db, ids?: readonly number[], now = new Date()): { ok: true; value: StoreExport } | { ok: false; message: string } {
  const one = db.prepare('SELECT id, name, tags, notes, created_at, deleted_at FROM scenarios WHERE id = ?');
  let rows: ScenarioRow[];
  if (ids && ids.length > 0) {
    rows = [];
    for (const id of ids) {
      const row = one.get(id) as ScenarioRow | undefined;
      if (!row) return { ok: false, message: `there is no scenario ${id}` };
      rows.push(row);
    }
  } else {
    rows = db.prepare('SELECT id, name, tags, notes, created_at, deleted_at FROM scenarios ORDER BY id').all() as ScenarioRow[];
  }
  const versions = db.prepare('SELECT version, scenario_json, fingerprint, note, author, saved_at FROM versions WHERE scenario_id = ? ORDER BY version');
  const runs = db.prepare('SELECT version, method, started_at, duration_ms, figures, warnings FROM runs WHERE scenario_id = ? ORDER BY id');
  const reports = db.prepare('SELECT version, fingerprint, sha256, issued_at, requested_by, pdf FROM reports WHERE scenario_id = ? ORDER BY id');
  // One read transaction: the file is a consistent picture even while the server saves.
  const scenarios = db.transaction(() =>
    rows.map(
      (s): ExportedScenario => ({
        name: s.name,
        tags: JSON.parse(s.tags) as string[],
        notes: s.notes,
        created: s.created_at,
        deleted: s.deleted_at,
        versions: (versions.all(s.id) as { version: number; scenario_json: string; fingerprint: string; note: string; author: string; saved_at: string }[]).map((v) => ({
          version: v.version,
          scenario: JSON.parse(v.scenario_json) as Record<string, unknown>,
          fingerprint: v.fingerprint,
          note: v.note,
          author: v.author,
          savedAt: v.saved_at,
        })),
        runs: (runs.all(s.id) as { version: number; method: string; started_at: string; duration_ms: number; figures: string; warnings: string }[]).map((r) => ({
          version: r.version,
          method: r.method,
          startedAt: r.started_at,
          durationMs: r.duration_ms,
          figures: JSON.parse(r.figures) as Record<string, unknown>,
          warnings: JSON.parse(r.warnings) as string[],
        })),
        reports: (reports.all(s.id) as { version: number; fingerprint: string; sha256: string; issued_at: string; requested_by: string; pdf: Buffer }[]).map((r) => ({
          version: r.version,
          fingerprint: r.fingerprint,
          sha256: r.sha256,
          issuedAt: r.issued_at,
          requestedBy: r.requested_by,
          pdfBase64: r.pdf.toString('base64'),
        })),
      }),
    ),
  )();
  return { ok: true, value: { tidemarkStore: storeExportFormat, exported: now.toISOString(), scenarios } };
}

export interface Imported {
  id: number;
  name: string;
  versions: number;
  runs: number;
  reports: number;
}

/**
 * Adds the scenarios of a parsed export file as new scenarios, all in one transaction; the
 * file's problems (with their JSON paths) and nothing added when it fails its check.
 */
export function importScenarios(db: Db, file: unknown): { ok: true; value: Imported[] } | { ok: false; problems: Problem[] } {
  const checked = checkStoreExport(file);
  if (!checked.ok) return checked;
  const addScenario = db.prepare(
    `INSERT INTO scenarios (name, tags, notes, created_at, deleted_at, latest_version, updated_at, latest_fingerprint, latest_author, search_text)
     VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
  );
  const addVersion = db.prepare('INSERT INTO versions (scenario_id, version, scenario_json, fingerprint, note, author, saved_at) VALUES (?, ?, ?, ?, ?, ?, ?)');
  const addRun = db.prepare('INSERT INTO runs (scenario_id, version, method, started_at, duration_ms, figures, warnings, result) VALUES (?, ?, ?, ?, ?, ?, ?, NULL)');
  const addReport = db.prepare('INSERT INTO reports (scenario_id, version, fingerprint, sha256, pdf, issued_at, requested_by) VALUES (?, ?, ?, ?, ?, ?, ?)');
  const value = db
    .transaction(() =>
      checked.value.scenarios.map((s): Imported => {
        const latest = s.versions[s.versions.length - 1];
        const id = Number(
          addScenario.run(s.name, JSON.stringify(s.tags), s.notes, s.created, s.deleted, latest.version, latest.savedAt, latest.fingerprint, latest.author, searchTextOf(s.name, s.tags)).lastInsertRowid,
        );
        // The text kept is JSON.stringify of the parsed scenario, as a save keeps it: the same bytes as in the exporting store.
        for (const v of s.versions) addVersion.run(id, v.version, JSON.stringify(v.scenario), v.fingerprint, v.note, v.author, v.savedAt);
        for (const r of s.runs) addRun.run(id, r.version, r.method, r.startedAt, r.durationMs, JSON.stringify(r.figures), JSON.stringify(r.warnings));
        for (const r of s.reports) addReport.run(id, r.version, r.fingerprint, r.sha256, Buffer.from(r.pdfBase64, 'base64'), r.issuedAt, r.requestedBy);
        return { id, name: s.name, versions: s.versions.length, runs: s.runs.length, reports: s.reports.length };
      }),
    )
    .immediate();
  return { ok: true, value };
}
