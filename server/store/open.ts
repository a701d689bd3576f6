/**
 * Opening the store's database: one SQLite file, WAL journal, foreign keys on, migrations
 * applied at start-up. A file that cannot be used (locked by another program, read-only,
 * damaged, written by a newer Tidemark) gives a plain message instead of a crash: the server
 * keeps serving everything else and says why saving is off. Nothing here ever deletes,
 * truncates or rewrites a file it could not read.
 */
import Database from 'better-sqlite3';
import { accessSync, constants, existsSync, mkdirSync } from 'node:fs';
import { dirname } from 'node:path';
import { latestSchemaVersion, migrations } from './migrations.ts';

export type Db = Database.Database;

export type StoreOpening =
  | { ok: true; db: Db; file: string; schemaVersion: number; readOnly: boolean; note?: string }
  | { ok: false; file: string; message: string; /** the cause may pass (a lock): worth trying again later */ transient: boolean };

export interface OpenOptions {
  /**
   * How long a statement waits for another program's lock before giving up, in milliseconds
   * (default 1000). better-sqlite3 waits synchronously, so the server's HTTP thread stands
   * still that long: a short wait and a 503 that says why beats a server that stalls.
   */
  busyTimeoutMs?: number;
  /** The same wait while opening (default 250): a locked file at start-up must not hold up the server. */
  openTimeoutMs?: number;
  /** Open without writing anything (the command line's list, show and export). */
  readOnly?: boolean;
}

/** The SQLite result code of an error thrown by better-sqlite3, or ''. */
export function sqliteCode(e: unknown): string {
  return typeof e === 'object' && e !== null && typeof (e as { code?: unknown }).code === 'string' ? (e as { code: string }).code : '';
}

/** A failure to open or use the file, in words a user can act on. */
export function describeFailure(file: string, e: unknown): { message: string; transient: boolean } {
  const code = sqliteCode(e);
  const detail = e instanceof Error ? e.message : String(e);
  if (code === 'SQLITE_BUSY' || code.startsWith('SQLITE_BUSY') || code === 'SQLITE_LOCKED') {
    return { message: `the store ${file} is locked by another program (${detail}); close that program, or set TIDEMARK_DATA to another folder. Saving is off until the lock is released.`, transient: true };
  }
  if (code === 'SQLITE_NOTADB' || code.startsWith('SQLITE_CORRUPT')) {
    return { message: `the store ${file} is damaged or is not a Tidemark database (${detail}). It was left untouched: restore a backup, or move it aside and restart to begin a new store.`, transient: false };
  }
  if (code.startsWith('SQLITE_READONLY')) {
    return { message: `the store ${file} cannot be written (${detail}); check the permissions of the file and its folder. Saving is off.`, transient: false };
  }
  if (code.startsWith('SQLITE_CANTOPEN') || code.startsWith('SQLITE_IOERR') || code === 'SQLITE_FULL' || code === 'SQLITE_PERM') {
    return { message: `the store ${file} cannot be opened or written (${detail}). Saving is off.`, transient: false };
  }
  return { message: `the store ${file} could not be used: ${detail}`, transient: false };
}

function writable(path: string): boolean {
  try {
    accessSync(path, constants.W_OK);
    return true;
  } catch {
    return false;
  }
}

/** The highest schema version recorded in the file; 0 for a new file. */
function recordedSchemaVersion(db: Db): number {
  const table = db.prepare("SELECT 1 FROM sqlite_master WHERE type = 'table' AND name = 'schema_version'").get();
  if (!table) return 0;
  const row = db.prepare('SELECT max(version) AS v FROM schema_version').get() as { v: number | null };
  return row.v ?? 0;
}

/** Applies the migrations after `from`, each in its own transaction with its record. */
function migrate(db: Db, from: number): void {
  db.exec('CREATE TABLE IF NOT EXISTS schema_version (version INTEGER PRIMARY KEY, description TEXT NOT NULL, applied_at TEXT NOT NULL)');
  const record = db.prepare('INSERT INTO schema_version (version, description, applied_at) VALUES (?, ?, ?)');
  for (const m of migrations) {
    if (m.version <= from) continue;
    db.transaction(() => {
      db.exec(m.sql);
      record.run(m.version, m.description, new Date().toISOString());
    }).immediate();
  }
}

export function openStore(file: string, options: OpenOptions = {}): StoreOpening {
  const folder = dirname(file);
  const exists = existsSync(file);
  let readOnly = options.readOnly === true;
  let note: string | undefined;
  if (!readOnly) {
    try {
      mkdirSync(folder, { recursive: true });
    } catch (e) {
      return { ok: false, file, ...describeFailure(file, e) };
    }
    // A WAL database needs its folder writable too (the -wal and -shm files beside it).
    if ((exists && !writable(file)) || !writable(folder)) {
      readOnly = true;
      note = `the store ${file} (or its folder) cannot be written; it is open for reading only and saving is off.`;
    }
  }
  if (readOnly && !exists) return { ok: false, file, message: `there is no store at ${file}`, transient: false };
  let db: Db | null = null;
  try {
    db = new Database(file, { readonly: readOnly, fileMustExist: readOnly, timeout: options.openTimeoutMs ?? Math.min(250, options.busyTimeoutMs ?? 250) });
    db.pragma('foreign_keys = ON');
    // The checks come before anything that writes: switching a rollback-journal file to WAL
    // rewrites its header, which a damaged or newer file must not have done to it.
    const quick = db.pragma('quick_check', { simple: true });
    if (quick !== 'ok') {
      db.close();
      return { ok: false, file, message: `the store ${file} failed SQLite's quick check (${String(quick)}). It was left untouched: restore a backup, or move it aside and restart.`, transient: false };
    }
    const recorded = recordedSchemaVersion(db);
    if (recorded > latestSchemaVersion) {
      db.close();
      return { ok: false, file, message: `the store ${file} was written by a newer Tidemark (schema ${recorded}; this one knows up to ${latestSchemaVersion}). It was left untouched: use the newer Tidemark, or set TIDEMARK_DATA to another folder.`, transient: false };
    }
    if (!readOnly) {
      db.pragma('journal_mode = WAL');
      // FULL: an acknowledged save survives a power cut, not only a killed process.
      db.pragma('synchronous = FULL');
    }
    if (recorded < latestSchemaVersion) {
      if (readOnly) {
        db.close();
        return { ok: false, file, message: `the store ${file} needs its schema brought up to date (schema ${recorded} → ${latestSchemaVersion}), which a read-only file does not allow.`, transient: false };
      }
      migrate(db, recorded);
    }
    db.pragma(`busy_timeout = ${Math.max(0, Math.round(options.busyTimeoutMs ?? 1000))}`);
    return { ok: true, db, file, schemaVersion: latestSchemaVersion, readOnly, ...(note ? { note } : {}) };
  } catch (e) {
    try {
      db?.close();
    } catch {
      /* already failing; the first error is the one to report */
    }
    return { ok: false, file, ...describeFailure(file, e) };
  }
}
