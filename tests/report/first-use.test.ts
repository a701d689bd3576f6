// What a first-time reader of the report tripped over (issue 10): fluctuation as a fraction
// beside a page that shows percent, "doses[1]" in the steady-state words, and a last page
// holding only a table's two-line note. Each is read back from the PDF with pdftotext.
import { afterAll, describe, expect, it } from 'vitest';
import { normaliseScenario } from '../../models/scenario/normalize.ts';
import { simulateModel } from '../../models/simulate.ts';
import { fmt } from '../../models/result/summary-text.ts';
import { createReportDocument, contentBottom, documentBytes } from '../../server/report/document.ts';
import { doseLabelsOf, doseLineName, plainDoseWords } from '../../models/result/dose-words.ts';
import { buildReport } from '../../server/report/report.ts';
import { drawTable } from '../../server/report/table.ts';
import { pdfPages, readSample, removeTempFiles, squeeze } from './helpers.ts';

afterAll(removeTempFiles);

const now = new Date('2026-03-04T09:15:00Z');

function reportText(scenario: unknown): string[] {
  const out = buildReport({ scenario }, { now });
  if (!out.ok) throw new Error(JSON.stringify(out.problems));
  return pdfPages(out.bytes).map(squeeze);
}

function simulate(scenario: unknown) {
  const model = normaliseScenario(scenario);
  if (!model.ok) throw new Error(JSON.stringify(model.problems));
  const result = simulateModel(model.value);
  if (!result.ok) throw new Error(JSON.stringify(result.problems));
  return result.value;
}

describe('fluctuation in percent, as on the page', () => {
  it('prints the steady-state and per-interval fluctuation as 100 × (Cmax − Cmin)/Cavg, labelled %', () => {
    const scenario = readSample('brennock-oral-bid');
    const result = simulate(scenario);
    const central = result.metrics.steadyState?.compartments.find((c) => c.compartment === 'central');
    const fraction = central?.fluctuation;
    if (fraction === null || fraction === undefined) throw new Error('the sample has no steady-state fluctuation');
    const text = reportText(scenario).join('\n');
    // The page writes fmt(100 × fluctuation) with a % unit (client/src/figures.ts).
    expect(text).toMatch(new RegExp(`Fluctuation \\(Cmax − Cmin\\)/Cavg \\(%\\) ${fmt(100 * fraction).replace('.', '\\.')}\\b`));
    expect(text).not.toMatch(new RegExp(`Fluctuation \\(Cmax − Cmin\\)/Cavg \\(%\\) ${fmt(fraction).replace('.', '\\.')}\\b`));
    expect(text).toContain('Fluct. %');
    // The first interval's row ends with its fluctuation in percent and its share in the window.
    const first = result.metrics.compartments.find((c) => c.compartment === 'central')?.intervals[0];
    if (!first || first.fluctuation === null) throw new Error('no first interval');
    expect(text).toMatch(new RegExp(`\\n\\s*1 0 12 ${fmt(first.cmax)} .* ${fmt(100 * first.fluctuation).replace('.', '\\.')} `));
  });
});

describe('dose lines in words', () => {
  it('names a dose line by its number and label, never by its JSON path', () => {
    const labels = doseLabelsOf({ doses: [{ label: 'loading' }, { label: 'maintenance' }, {}] });
    expect(labels).toEqual(['loading', 'maintenance', null]);
    expect(doseLineName(1, labels)).toBe('dose line 2 — maintenance');
    expect(doseLineName(2, labels)).toBe('dose line 3');
    expect(plainDoseWords('steady state of doses[1] and doses[2] over a cycle', labels)).toBe('steady state of dose line 2 — maintenance and dose line 3 over a cycle');
    // A path to a field stays a path: it is where the problem is, not a name.
    expect(plainDoseWords('see doses[0].amount', labels)).toBe('see doses[0].amount');
  });

  it('writes the steady state of the tallowen maintenance line as "dose line 2 — maintenance"', () => {
    const scenario = readSample('tallowen-infusion-loading');
    // Whether the engine's message names the line by path (doses[1]) or already in words, the
    // report shows the words.
    const text = reportText(scenario).join('\n');
    expect(text).toContain('steady state of dose line 2 — maintenance over a dosing cycle of 8 h');
    expect(text).not.toContain('doses[');
  });
});

describe('a table keeps its note', () => {
  const rows = Array.from({ length: 30 }, (_, i) => [String(i + 1), fmt(i * 1.5), fmt(100 / (i + 1))]);
  const footnote = 'Trough: the concentration just before the next dose (— for the last interval). This note is long enough to take two lines of the small type used under tables in the report, as the per-interval note does.';
  const columns = [
    { header: '#', width: 0.5 },
    { header: 'Start', width: 1, align: 'right' as const },
    { header: 'Value', width: 1, align: 'right' as const },
  ];

  /** Draws the table with its top at `top` and returns where its last rows and its note landed. */
  function drawAt(top: number) {
    const doc = createReportDocument({ title: 't', subject: 's', author: 'a', keywords: 'k', created: now });
    doc.y = top;
    const drawn = drawTable(doc, { caption: 'Per-interval figures', columns, rows, footnote, zebra: true });
    return { drawn, pages: pdfPages(documentBytes(doc)).map(squeeze) };
  }

  it('moves the last rows to the next page with the note rather than leave the note alone there', () => {
    // Slide the table down the first page point by point: wherever the break falls, the page
    // with the note also holds the table's last two rows.
    let breaks = 0;
    for (let top = contentBottom - 30 * 14; top < contentBottom - 60; top += 13) {
      const { drawn, pages } = drawAt(top);
      expect(drawn.footnotePage).toBe(drawn.lastRowPage);
      const last = pages[drawn.footnotePage ?? 0];
      expect(last).toContain('Trough: the concentration just before the next dose');
      expect(last).toMatch(/\n\s*29 42 3\.448/);
      expect(last).toMatch(/\n\s*30 43\.5 3\.333/);
      if (drawn.pages.length > 1) breaks++;
    }
    // The slide did cross the page bottom (the case of the issue), not only fit on one page.
    expect(breaks).toBeGreaterThan(5);
  });

  it('ends every sample report with more than a note on its last page', () => {
    for (const name of ['brennock-oral-bid', 'tallowen-infusion-loading', 'skorvel-saturable-dose-increase', 'lindquay-parallel-elimination', 'merridune-three-compartment-bolus']) {
      const pages = reportText(readSample(name));
      const body = pages[pages.length - 1]
        .split('\n')
        .map((l) => l.trim())
        .filter((l) => l && !/page \d+ of \d+/i.test(l) && !/fingerprint/i.test(l) && !/^Tidemark/.test(l));
      // Furniture aside, the last page has at least a few lines of content, not a two-line note.
      expect(body.length, `${name}: last page ${JSON.stringify(body)}`).toBeGreaterThan(3);
    }
  });
});

describe('the steady state as the regimen continued (item 4)', () => {
  it('says plainly when the course ends before steady state, beside the steady-state figures', () => {
    // Clearance 0.42 L/h in 42 L: k = 0.01 /h, 90% of steady state at about 230 h (ln 10/k for
    // the AUC-based definition, bolus-like oral absorption); the sample's week ends at 168 h.
    const scenario = readSample('brennock-oral-bid');
    (scenario.transfers as { cl?: string }[])[1].cl = '0.42 L/h';
    // Lines of a paragraph joined: a phrase may wrap anywhere.
    const text = reportText(scenario).join('\n').replace(/\n/g, ' ');
    expect(text).toContain('Steady state of the regimen continued');
    expect(text).toMatch(/Computed: steady state of dose line 1 — maintenance/);
    expect(text).toMatch(/whether or not the simulated span gets there/);
    expect(text).toMatch(/'central' is not at steady state by the end of the span \(168 h\): 90% of steady state takes [\d.]+ h/);
    expect(text).not.toMatch(/\bReached\b/);
  });
});
