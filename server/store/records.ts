/**
 * What the store answers with: the JSON shapes of its API, shared by the server, the
 * command line and the page (which imports these types only). Times are ISO 8601 UTC.
 */
import { z } from 'zod';

/** Bounds on what a user types into the store; stated in the README. */
export const storeLimits = {
  name: 200,
  tags: 20,
  tag: 40,
  note: 2000,
  notes: 10_000,
  author: 100,
  /** The scenario's JSON text, in characters (the server's request body limit is 2 MB too). */
  scenarioChars: 2_000_000,
  /** Scenarios listed in one answer. */
  listPage: 1000,
} as const;

/** Text cut to at most `max` UTF-16 units without splitting a character pair (half of one could not be stored). */
export function clipText(text: string, max: number): string {
  const cut = text.slice(0, max);
  return cut.length > 0 && /[\ud800-\udbff]$/.test(cut) && text.length > max ? cut.slice(0, -1) : cut;
}

// A lone surrogate (half of a UTF-16 pair, which JSON's \u escapes can carry) has no UTF-8
// form: SQLite would keep replacement characters instead, so it is refused, not changed.
const text = (max: number, what: string) =>
  z
    .string({ error: `${what} must be text` })
    .max(max, { error: `${what} is longer than ${max} characters` })
    .refine((s) => !/\p{Cs}/u.test(s), { error: `${what} holds half of a UTF-16 character pair (a lone surrogate), which cannot be stored` });

export const metadataSchema = z.object({
  name: text(storeLimits.name, 'the name').refine((s) => s.trim().length > 0, { error: 'the name is empty' }).optional(),
  tags: z
    .array(text(storeLimits.tag, 'a tag').refine((s) => s.trim().length > 0, { error: 'a tag is empty' }), { error: 'tags must be a list of text' })
    .max(storeLimits.tags, { error: `at most ${storeLimits.tags} tags` })
    .optional(),
  notes: text(storeLimits.notes, 'the notes').optional(),
});

export const newScenarioSchema = metadataSchema.extend({
  scenario: z.unknown(),
  note: text(storeLimits.note, 'the change note').optional(),
  author: text(storeLimits.author, 'the author').optional(),
});

export const newVersionSchema = z.object({
  scenario: z.unknown(),
  baseVersion: z.number({ error: 'baseVersion must be the version number the edit started from' }).int().positive(),
  note: text(storeLimits.note, 'the change note').optional(),
  author: text(storeLimits.author, 'the author').optional(),
});

export type Metadata = z.infer<typeof metadataSchema>;
export type NewScenario = z.infer<typeof newScenarioSchema>;
export type NewVersion = z.infer<typeof newVersionSchema>;

export interface ScenarioSummary {
  id: number;
  name: string;
  tags: string[];
  notes: string;
  created: string;
  updated: string;
  latestVersion: number;
  fingerprint: string;
  author: string;
  deleted: boolean;
}

export interface VersionInfo {
  version: number;
  fingerprint: string;
  note: string;
  author: string;
  savedAt: string;
  /** Length of the saved JSON text in bytes (UTF-8). */
  bytes: number;
}

export interface RunInfo {
  id: number;
  scenarioId: number;
  version: number;
  method: string;
  startedAt: string;
  durationMs: number;
  figures: Record<string, unknown>;
  warnings: string[];
}

export interface ReportInfo {
  id: number;
  scenarioId: number;
  name: string;
  version: number;
  fingerprint: string;
  sha256: string;
  issuedAt: string;
  requestedBy: string;
  bytes: number;
}

export interface StoreStatus {
  available: boolean;
  file: string;
  schemaVersion: number;
  readOnly: boolean;
  message?: string;
}
