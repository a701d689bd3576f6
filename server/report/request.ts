/**
 * The shape of a report request. The body is a plain scenario (as /api/simulate takes), or
 * `{ "scenario": …, "reference": … }` to draw a kept reference run dashed over it. A
 * scenario never has a `scenario` key (the format is strict), so the two cannot be confused.
 * Kept apart from the report itself so the HTTP thread can read a request without loading
 * the PDF writer.
 */
import { scenarioFingerprint } from '../../models/scenario/fingerprint.ts';
import { reportFileName } from './format.ts';

export interface ReportRequest {
  scenario: unknown;
  /** A second scenario drawn dashed over the first (the page's compare reference). */
  reference?: unknown;
}

export function readReportRequest(body: unknown): ReportRequest {
  if (typeof body === 'object' && body !== null && !Array.isArray(body) && 'scenario' in body && !('compartments' in body)) {
    const { scenario, reference } = body as { scenario: unknown; reference?: unknown };
    return reference === undefined || reference === null ? { scenario } : { scenario, reference };
  }
  return { scenario: body };
}

/** The download name of the report of a valid scenario: tidemark-<slug of the title>-<fingerprint>.pdf. */
export function reportFileNameOf(scenario: unknown): string {
  const title = (scenario as { title?: unknown }).title;
  return reportFileName(typeof title === 'string' ? title : 'scenario', scenarioFingerprint(scenario));
}
