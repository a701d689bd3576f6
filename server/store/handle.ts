/**
 * The server's hold on the store. When the file cannot be used the handle keeps the reason
 * and every store request answers 503 with it; a lock held by another program may pass, so
 * the handle tries again on a later request (at most every few seconds), which needs no
 * restart and can never turn into a crash loop.
 */
import type { Db, OpenOptions, StoreOpening } from './open.ts';
import { describeFailure, openStore, sqliteCode } from './open.ts';
import type { StoreStatus } from './records.ts';

export type StoreAccess = { ok: true; db: Db; readOnly: boolean } | { ok: false; message: string };

export interface HandleOptions extends OpenOptions {
  /** How long after a failed opening the next request may try again, in milliseconds (default 3000; tests shorten it). */
  retryAfterMs?: number;
}

export class StoreHandle {
  private opening: StoreOpening;
  private triedAt: number;

  constructor(
    readonly file: string,
    private readonly options: HandleOptions = {},
  ) {
    this.opening = openStore(file, options);
    this.triedAt = Date.now();
  }

  private retryIfWorthIt(): void {
    if (this.opening.ok || !this.opening.transient || Date.now() - this.triedAt < (this.options.retryAfterMs ?? 3000)) return;
    this.opening = openStore(this.file, this.options);
    this.triedAt = Date.now();
  }

  /** The database for reading. */
  read(): StoreAccess {
    this.retryIfWorthIt();
    return this.opening.ok ? { ok: true, db: this.opening.db, readOnly: this.opening.readOnly } : { ok: false, message: this.opening.message };
  }

  /** The database for writing; a read-only store says why. */
  write(): StoreAccess {
    const access = this.read();
    if (access.ok && access.readOnly) return { ok: false, message: this.opening.ok && this.opening.note ? this.opening.note : `the store ${this.file} is open for reading only; saving is off` };
    return access;
  }

  /**
   * A statement failed on an open database. A damaged file takes the store out of use (no
   * further writes to it); a lock is only reported. Returns the message for the user.
   */
  failed(e: unknown): string {
    const { message, transient } = describeFailure(this.file, e);
    const code = sqliteCode(e);
    if (!transient && (code === 'SQLITE_NOTADB' || code.startsWith('SQLITE_CORRUPT'))) {
      if (this.opening.ok) this.opening.db.close();
      this.opening = { ok: false, file: this.file, message, transient: false };
    }
    return message;
  }

  status(): StoreStatus {
    this.retryIfWorthIt();
    const o = this.opening;
    if (o.ok) return { available: true, file: this.file, schemaVersion: o.schemaVersion, readOnly: o.readOnly, ...(o.note ? { message: o.note } : {}) };
    return { available: false, file: this.file, schemaVersion: 0, readOnly: false, message: o.message };
  }

  close(): void {
    if (this.opening.ok) this.opening.db.close();
    this.opening = { ok: false, file: this.file, message: 'the store is closed', transient: false };
  }
}
