/**
 * The store's schema, as numbered migrations. Each runs once, in its own transaction, with
 * a row in schema_version recording it; a database whose schema_version holds a number
 * beyond the last one here was written by a newer Tidemark and is left untouched.
 * Migrations are only ever appended: a released one is never edited.
 */
export interface Migration {
  version: number;
  description: string;
  sql: string;
}

export const migrations: readonly Migration[] = [
  {
    version: 1,
    description: 'scenarios, their versions, runs and issued reports',
    sql: `
      CREATE TABLE scenarios (
        id INTEGER PRIMARY KEY,
        name TEXT NOT NULL,
        tags TEXT NOT NULL DEFAULT '[]',        -- JSON array of strings, as typed
        notes TEXT NOT NULL DEFAULT '',
        created_at TEXT NOT NULL,
        deleted_at TEXT,                        -- NULL unless deleted (soft: restorable)
        -- The latest version, kept here in the same transaction as each save, so that a
        -- list of thousands reads one table.
        latest_version INTEGER NOT NULL DEFAULT 0,
        updated_at TEXT NOT NULL,
        latest_fingerprint TEXT NOT NULL DEFAULT '',
        latest_author TEXT NOT NULL DEFAULT '',
        -- Name and tags folded to lower case, for the search (SQLite's LIKE folds ASCII only).
        search_text TEXT NOT NULL DEFAULT ''
      );
      CREATE INDEX scenarios_updated ON scenarios(updated_at DESC, id DESC);

      CREATE TABLE versions (
        id INTEGER PRIMARY KEY,
        scenario_id INTEGER NOT NULL REFERENCES scenarios(id),
        version INTEGER NOT NULL,
        scenario_json TEXT NOT NULL,            -- the scenario exactly as saved
        fingerprint TEXT NOT NULL,              -- as printed on reports (models/scenario/fingerprint.ts)
        note TEXT NOT NULL DEFAULT '',
        author TEXT NOT NULL DEFAULT '',
        saved_at TEXT NOT NULL,
        UNIQUE (scenario_id, version)
      );
      CREATE INDEX versions_fingerprint ON versions(fingerprint);

      CREATE TABLE runs (
        id INTEGER PRIMARY KEY,
        scenario_id INTEGER NOT NULL,
        version INTEGER NOT NULL,
        method TEXT NOT NULL,
        started_at TEXT NOT NULL,
        duration_ms REAL NOT NULL,
        figures TEXT NOT NULL,                  -- JSON: the key figures
        warnings TEXT NOT NULL,                 -- JSON array of strings
        result BLOB,                            -- gzip of the full result JSON, read only on request
        FOREIGN KEY (scenario_id, version) REFERENCES versions(scenario_id, version)
      );
      CREATE INDEX runs_scenario ON runs(scenario_id, id DESC);

      CREATE TABLE reports (
        id INTEGER PRIMARY KEY,
        scenario_id INTEGER NOT NULL,
        version INTEGER NOT NULL,
        fingerprint TEXT NOT NULL,              -- the scenario fingerprint printed on the report
        sha256 TEXT NOT NULL,                   -- of the PDF bytes as issued
        pdf BLOB NOT NULL,
        issued_at TEXT NOT NULL,
        requested_by TEXT NOT NULL DEFAULT '',
        FOREIGN KEY (scenario_id, version) REFERENCES versions(scenario_id, version)
      );
      CREATE INDEX reports_fingerprint ON reports(fingerprint);
      CREATE INDEX reports_scenario ON reports(scenario_id, id DESC);
    `,
  },
];

/** The newest schema this program knows. */
export const latestSchemaVersion = migrations[migrations.length - 1].version;
