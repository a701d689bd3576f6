/**
 * The store's export file: one JSON document holding whole scenarios — every version, the
 * runs made from them (their key figures, not the full results) and the issued reports (the
 * PDF bytes as base64) — for moving them to another store (`store export` / `store import`).
 *
 *   { "tidemarkStore": 1, "exported": ISO 8601,
 *     "scenarios": [ { "name", "tags", "notes", "created", "deleted": ISO 8601 | null,
 *       "versions": [ { "version", "scenario", "fingerprint", "note", "author", "savedAt" } ],
 *       "runs": [ { "version", "method", "startedAt", "durationMs", "figures", "warnings" } ],
 *       "reports": [ { "version", "fingerprint", "sha256", "issuedAt", "requestedBy", "pdfBase64" } ] } ] }
 *
 * Versions are listed oldest first. Ids are not part of the format: an import adds every
 * scenario as a new one. Reading a file checks more than its shape: each version's
 * fingerprint against its scenario and each report's sha256 against its bytes, so that a
 * file changed after export is refused instead of entering the store as history it is not.
 */
import { createHash } from 'node:crypto';
import { z } from 'zod';
import { scenarioFingerprint } from '../../models/scenario/fingerprint.ts';
import { formatPath, type Problem } from '../../models/scenario/problems.ts';
import { metadataSchema, newScenarioSchema, storeLimits } from './records.ts';

export const storeExportFormat = 1;

// The texts a user types are checked as a save checks them (records.ts).
const userText = {
  name: metadataSchema.shape.name.unwrap(),
  tags: metadataSchema.shape.tags.unwrap(),
  notes: metadataSchema.shape.notes.unwrap(),
  note: newScenarioSchema.shape.note.unwrap(),
  author: newScenarioSchema.shape.author.unwrap(),
};
const text = (max: number, what: string) => z.string({ error: `${what} must be text` }).max(max, { error: `${what} is longer than ${max} characters` });
const time = (orNull = false) => z.iso.datetime({ error: `must be an ISO 8601 UTC time such as 2026-12-02T14:03:11.123Z${orNull ? ' (or null)' : ''}` });
const hex = (digits: number, what: string) => z.string({ error: `${what} must be text` }).regex(new RegExp(`^[0-9a-f]{${digits}}$`), { error: `${what} must be ${digits} lowercase hexadecimal digits` });
/**
 * A JSON object, passed through as parsed (z.record would build a copy, in which a key such as
 * "__proto__" would not survive as the plain key it is in the file).
 */
const jsonObject = (what: string) =>
  z.unknown().refine((v) => typeof v === 'object' && v !== null && !Array.isArray(v), { error: `${what} must be a JSON object` }) as z.ZodType<Record<string, unknown>>;
const versionNumber = z.number({ error: 'the version must be a number' }).int({ error: 'the version must be a whole number' }).positive({ error: 'the version must be 1 or more' });

const versionSchema = z.object({
  version: versionNumber,
  scenario: jsonObject('the scenario'),
  fingerprint: hex(12, 'the fingerprint'),
  note: userText.note,
  author: userText.author,
  savedAt: time(),
});

const runSchema = z.object({
  version: versionNumber,
  method: text(200, 'the method'),
  startedAt: time(),
  durationMs: z.number({ error: 'durationMs must be a number' }).nonnegative({ error: 'durationMs must not be negative' }),
  figures: jsonObject('the figures'),
  warnings: z.array(z.string({ error: 'a warning must be text' }), { error: 'the warnings must be a list of text' }),
});

const reportSchema = z.object({
  version: versionNumber,
  fingerprint: hex(12, 'the fingerprint'),
  sha256: hex(64, 'the sha256'),
  issuedAt: time(),
  requestedBy: userText.author,
  pdfBase64: z
    .string({ error: 'pdfBase64 must be text' })
    .regex(/^(?:[A-Za-z0-9+/]{4})*(?:[A-Za-z0-9+/]{2}==|[A-Za-z0-9+/]{3}=)?$/, { error: 'pdfBase64 must be the PDF bytes in base64 (RFC 4648, with padding)' }),
});

const scenarioSchema = z.object({
  name: userText.name,
  tags: userText.tags,
  notes: userText.notes,
  created: time(),
  deleted: time(true).nullable(),
  versions: z.array(versionSchema, { error: 'versions must be a list' }).min(1, { error: 'a scenario needs at least one version' }),
  runs: z.array(runSchema, { error: 'runs must be a list' }),
  reports: z.array(reportSchema, { error: 'reports must be a list' }),
});

export const storeExportSchema = z.object({
  tidemarkStore: z.literal(storeExportFormat, { error: `tidemarkStore must be ${storeExportFormat}: this is not a Tidemark store export, or one of a newer format` }),
  exported: time(),
  scenarios: z.array(scenarioSchema, { error: 'scenarios must be a list' }),
});

export type StoreExport = z.infer<typeof storeExportSchema>;
export type ExportedScenario = StoreExport['scenarios'][number];

const sha256Of = (bytes: Uint8Array) => createHash('sha256').update(bytes).digest('hex');

/** The problems beyond the shape: version order, fingerprints, the versions runs and reports name, report bytes. */
function contentProblems(file: StoreExport): Problem[] {
  const out: Problem[] = [];
  file.scenarios.forEach((s, i) => {
    const at = (...rest: (string | number)[]) => formatPath(['scenarios', i, ...rest]);
    const fingerprints = new Map<number, string>();
    s.versions.forEach((v, j) => {
      const previous = j > 0 ? s.versions[j - 1].version : 0;
      if (v.version <= previous) out.push({ path: at('versions', j, 'version'), message: `versions must be listed oldest first with increasing numbers (${v.version} follows ${previous})` });
      const json = JSON.stringify(v.scenario);
      if (json.length > storeLimits.scenarioChars) {
        out.push({ path: at('versions', j, 'scenario'), message: `the scenario's JSON is ${json.length} characters; the store keeps at most ${storeLimits.scenarioChars}` });
      }
      const computed = scenarioFingerprint(v.scenario);
      if (computed !== v.fingerprint) {
        out.push({ path: at('versions', j, 'fingerprint'), message: `is ${v.fingerprint} but the scenario's fingerprint is ${computed}: the scenario was changed after export` });
      }
      fingerprints.set(v.version, v.fingerprint);
    });
    s.runs.forEach((r, k) => {
      if (!fingerprints.has(r.version)) out.push({ path: at('runs', k, 'version'), message: `there is no version ${r.version} of this scenario in the file` });
    });
    s.reports.forEach((r, k) => {
      const versionFingerprint = fingerprints.get(r.version);
      if (versionFingerprint === undefined) out.push({ path: at('reports', k, 'version'), message: `there is no version ${r.version} of this scenario in the file` });
      else if (versionFingerprint !== r.fingerprint) {
        out.push({ path: at('reports', k, 'fingerprint'), message: `is ${r.fingerprint} but version ${r.version} has fingerprint ${versionFingerprint}` });
      }
      const computed = sha256Of(Buffer.from(r.pdfBase64, 'base64'));
      if (computed !== r.sha256) out.push({ path: at('reports', k, 'sha256'), message: `is ${r.sha256} but the PDF bytes' sha256 is ${computed}: the report was changed after export` });
    });
  });
  return out;
}

/** A parsed export file checked: its shape (zod) and then its content; problems name their JSON path in the file. */
export function checkStoreExport(value: unknown): { ok: true; value: StoreExport } | { ok: false; problems: Problem[] } {
  const shape = storeExportSchema.safeParse(value);
  if (!shape.success) {
    return { ok: false, problems: shape.error.issues.map((i) => ({ path: formatPath(i.path), message: i.message })) };
  }
  const problems = contentProblems(shape.data);
  return problems.length > 0 ? { ok: false, problems } : { ok: true, value: shape.data };
}
