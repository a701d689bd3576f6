// The report's typical proposals for samples/orvanix-propose.json, read back with pdftotext: rank
// 1's loading dose peaks above the 25 mg/L ceiling in its own first interval, and the report says
// so — the loading cell marks the target missed, the row's note under the table names the ceiling.
import { afterAll, describe, expect, it } from 'vitest';
import { buildReport } from '../../server/report/report.ts';
import { pdfPages, readSample, removeTempFiles } from './helpers.ts';

const now = new Date(Date.UTC(2031, 4, 17, 9, 30));

afterAll(removeTempFiles);

describe("report of proposals whose loading dose breaks a ceiling in its first interval", () => {
  const outcome = buildReport({ scenario: readSample('orvanix-propose') }, { now });
  if (!outcome.ok) throw new Error(`no report: ${JSON.stringify(outcome.problems)}`);
  const flat = pdfPages(outcome.bytes).join('\n').replace(/\s+/g, ' ');

  it("names the ceiling and the first interval's peak in rank 1's note, and marks the loading dose", () => {
    expect(flat).toContain("Rank 1: the loading dose's first-interval peak 30.5 mg/L is above the 25 mg/L ceiling (target 2)");
    // The cell wraps over two lines, which pdftotext -layout interleaves with the other columns': counted, once for each of ranks 1 and 2.
    expect(flat.match(/\(interval 1: /g)?.length).toBe(2);
  });
});
