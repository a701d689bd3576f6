/**
 * Issued reports: the PDF bytes exactly as sent, against the stored version they were made
 * from. The scenario fingerprint printed on a report finds its record and version.
 */
import { createHash } from 'node:crypto';
import type { Db } from './open.ts';
import type { ReportInfo } from './records.ts';

export interface ReportRecord {
  scenarioId: number;
  version: number;
  fingerprint: string;
  pdf: Uint8Array;
  issuedAt: string;
  requestedBy: string;
}

interface ReportRow {
  id: number;
  scenario_id: number;
  name: string;
  version: number;
  fingerprint: string;
  sha256: string;
  issued_at: string;
  requested_by: string;
  bytes: number;
}

const reportColumns = 'r.id, r.scenario_id, s.name, r.version, r.fingerprint, r.sha256, r.issued_at, r.requested_by, length(r.pdf) AS bytes';

function reportOf(row: ReportRow): ReportInfo {
  return {
    id: row.id,
    scenarioId: row.scenario_id,
    name: row.name,
    version: row.version,
    fingerprint: row.fingerprint,
    sha256: row.sha256,
    issuedAt: row.issued_at,
    requestedBy: row.requested_by,
    bytes: row.bytes,
  };
}

export function recordReport(db: Db, report: ReportRecord): number {
  const sha256 = createHash('sha256').update(report.pdf).digest('hex');
  return db.transaction(() =>
    Number(
      db
        .prepare('INSERT INTO reports (scenario_id, version, fingerprint, sha256, pdf, issued_at, requested_by) VALUES (?, ?, ?, ?, ?, ?, ?)')
        .run(report.scenarioId, report.version, report.fingerprint, sha256, Buffer.from(report.pdf.buffer, report.pdf.byteOffset, report.pdf.byteLength), report.issuedAt, report.requestedBy)
        .lastInsertRowid,
    ),
  ).immediate();
}

const fromReports = 'FROM reports r JOIN scenarios s ON s.id = r.scenario_id';

export function reportsOfScenario(db: Db, scenarioId: number): ReportInfo[] {
  return (db.prepare(`SELECT ${reportColumns} ${fromReports} WHERE r.scenario_id = ? ORDER BY r.id DESC`).all(scenarioId) as ReportRow[]).map(reportOf);
}

/** Reports by the fingerprint printed on them (upper or lower case). */
export function reportsWithFingerprint(db: Db, fingerprint: string): ReportInfo[] {
  return (db.prepare(`SELECT ${reportColumns} ${fromReports} WHERE r.fingerprint = ? ORDER BY r.id`).all(fingerprint.trim().toLowerCase()) as ReportRow[]).map(reportOf);
}

export function reportPdf(db: Db, id: number): Uint8Array | null {
  const row = db.prepare('SELECT pdf FROM reports WHERE id = ?').get(id) as { pdf: Buffer } | undefined;
  return row ? new Uint8Array(row.pdf.buffer, row.pdf.byteOffset, row.pdf.byteLength) : null;
}
