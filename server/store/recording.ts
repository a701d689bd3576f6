/**
 * Linking a run or a report to the stored version it was made from. The page names the
 * version in the query (`?scenario=ID&version=V`); it is recorded only when the scenario
 * sent has that version's fingerprint, so a record never points at content it did not use.
 */
import type { SimulationResultJson } from '../../models/result/result-format.ts';
import { keyFiguresOf } from '../../models/result/key-figures.ts';
import { scenarioFingerprint } from '../../models/scenario/fingerprint.ts';
import type { StoreHandle } from './handle.ts';
import { clipText, storeLimits } from './records.ts';
import { recordReport } from './reports.ts';
import { recordRun } from './runs.ts';
import { readVersion, scenarioSummary } from './scenarios.ts';

export interface StoredLink {
  id: number;
  version: number;
  /** Who asked (a report's requester), as typed. */
  by: string;
}

/** The link asked for in a query: null when none was given, a message when it is malformed. */
export function linkOf(query: Record<string, unknown>): StoredLink | null | { problem: string } {
  if (query.scenario === undefined && query.version === undefined) return null;
  const id = Number(query.scenario);
  const version = Number(query.version);
  if (!Number.isSafeInteger(id) || id < 1 || !Number.isSafeInteger(version) || version < 1) {
    return { problem: 'give both scenario= and version= as whole numbers to record against a stored version' };
  }
  const by = typeof query.by === 'string' ? clipText(query.by, storeLimits.author) : '';
  return { id, version, by };
}

export type LinkCheck = { ok: true; fingerprint: string; name: string } | { ok: false; status: 404 | 409 | 503; message: string };

/** Whether `scenario` is exactly the stored version the link names. */
export function checkLink(handle: StoreHandle, link: StoredLink, scenario: unknown): LinkCheck {
  const access = handle.write();
  if (!access.ok) return { ok: false, status: 503, message: access.message };
  try {
    const stored = readVersion(access.db, link.id, link.version);
    if (!stored) return { ok: false, status: 404, message: `there is no stored scenario ${link.id} version ${link.version}` };
    const fingerprint = scenarioFingerprint(scenario);
    if (fingerprint !== stored.fingerprint) {
      return { ok: false, status: 409, message: `the scenario sent (fingerprint ${fingerprint}) is not scenario ${link.id} version ${link.version} (fingerprint ${stored.fingerprint}); save it first` };
    }
    return { ok: true, fingerprint, name: scenarioSummary(access.db, link.id)?.name ?? '' };
  } catch (e) {
    return { ok: false, status: 503, message: handle.failed(e) };
  }
}

/** Records a successful simulation; the answer header's text (the run's id, or why not). */
export function recordSimulation(handle: StoreHandle, link: StoredLink, scenario: unknown, resultText: string, startedAt: Date, durationMs: number): string {
  const check = checkLink(handle, link, scenario);
  if (!check.ok) return `not recorded; ${check.message}`;
  const access = handle.write();
  if (!access.ok) return `not recorded; ${access.message}`;
  try {
    const result = JSON.parse(resultText) as SimulationResultJson;
    const d = result.diagnostics;
    const id = recordRun(access.db, {
      scenarioId: link.id,
      version: link.version,
      method: d.path === 'exact' ? 'exact (matrix exponential)' : d.methodsUsed.join(', ') || d.requestedMethod,
      startedAt: startedAt.toISOString(),
      durationMs,
      figures: { ...keyFiguresOf(result) },
      warnings: d.warnings,
      resultJson: resultText,
    });
    return String(id);
  } catch (e) {
    return `not recorded; ${handle.failed(e)}`;
  }
}

/** Records an issued report after checkLink passed; its id, or a message. */
export function recordIssuedReport(handle: StoreHandle, link: StoredLink, fingerprint: string, pdf: Uint8Array): { ok: true; id: number } | { ok: false; message: string } {
  const access = handle.write();
  if (!access.ok) return { ok: false, message: access.message };
  try {
    return { ok: true, id: recordReport(access.db, { scenarioId: link.id, version: link.version, fingerprint, pdf, issuedAt: new Date().toISOString(), requestedBy: link.by }) };
  } catch (e) {
    return { ok: false, message: handle.failed(e) };
  }
}
