// The report's typical proposals for samples/orvanix-propose.json, read back with pdftotext: rank
// 1's loading dose aimed at the trough (1250 mg) would peak above the 25 mg/L ceiling in its own
// first interval, so it is lowered to 1000 mg, and the report says so — the loading cell says
// "lowered from 1250", the row's note under the table names the ceiling and the figure.
import { afterAll, describe, expect, it } from 'vitest';
import { buildReport } from '../../server/report/report.ts';
import { pdfPages, readSample, removeTempFiles } from './helpers.ts';

const now = new Date(Date.UTC(2031, 4, 17, 9, 30));

afterAll(removeTempFiles);

describe('report of proposals whose loading dose is lowered to keep a ceiling in its first interval', () => {
  const outcome = buildReport({ scenario: readSample('orvanix-propose') }, { now });
  if (!outcome.ok) throw new Error(`no report: ${JSON.stringify(outcome.problems)}`);
  const flat = pdfPages(outcome.bytes).join('\n').replace(/\s+/g, ' ');
  // The cell's words wrap ('(lowered from' over '1250)'): read the layout with its columns, by row.
  const cells = pdfPages(outcome.bytes).join('\n');

  it("names the ceiling and the aimed dose's first-interval peak in rank 1's note, and marks the loading dose lowered", () => {
    expect(flat).toContain(
      "Rank 1: the loading dose is lowered from 1250 mg, the amount aimed at the steady-state trough, to 1000 mg, the largest sum of strengths that keeps every upper bound in its first interval: at 1250 mg, the loading dose's first-interval peak 30.5 mg/L is above the 25 mg/L ceiling (target 2)",
    );
    // The cell wraps over two lines, which pdftotext -layout interleaves with the other columns': counted, once for each of ranks 1 and 2.
    expect(cells.match(/\(lowered from\s+(?:\S+\s+){0,12}?1250\)/g)?.length).toBe(2);
    // The lowered dose keeps every target in its first interval: no miss is marked.
    expect(flat).not.toContain('(interval 1: ');
  });
});
