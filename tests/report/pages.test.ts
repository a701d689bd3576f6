// The report as a document: every sample gives a valid, readable PDF of at least two pages;
// long regimens flow over more pages with the table header repeated and no row lost; the
// document information names the report and Tidemark's version.
import { readFileSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { scenarioFingerprint } from '../../models/scenario/fingerprint.ts';
import { buildReport } from '../../server/report/report.ts';
import { pdfInfo, pdfPages, readSample, removeTempFiles, root } from './helpers.ts';

afterAll(removeTempFiles);

const version = (JSON.parse(readFileSync(join(root, 'package.json'), 'utf8')) as { version: string }).version;

function build(scenario: unknown) {
  const outcome = buildReport({ scenario }, { now: new Date(Date.UTC(2031, 0, 2, 3, 4)) });
  if (!outcome.ok) throw new Error(`no report: ${JSON.stringify(outcome.problems)}`);
  return outcome;
}

describe('every bundled sample', () => {
  const samples = readdirSync(join(root, 'samples')).filter((f) => f.endsWith('.json'));

  it('is there to test', () => {
    expect(samples.length).toBeGreaterThanOrEqual(5);
  });

  for (const file of samples) {
    it(`${file} gives a valid report of two or more pages`, () => {
      const scenario = JSON.parse(readFileSync(join(root, 'samples', file), 'utf8')) as { title: string };
      const outcome = build(scenario);
      expect(Buffer.from(outcome.bytes.subarray(0, 5)).toString('latin1')).toBe('%PDF-');
      const pages = pdfPages(outcome.bytes);
      expect(pages.length).toBeGreaterThanOrEqual(2);
      expect(Number(pdfInfo(outcome.bytes).Pages)).toBe(pages.length);
      expect(outcome.pages).toBe(pages.length);
      expect(pages[0].replace(/\s+/g, ' ')).toContain(scenario.title.replace(/\s+/g, ' ').slice(0, 30));
      expect(pages[0]).toContain(scenarioFingerprint(scenario));
      // No page is empty apart from its header and footer.
      for (const page of pages) expect(page.replace(/\s+/g, ' ').length).toBeGreaterThan(200);
    });
  }
});

describe('document information', () => {
  it('has the title, subject, author, creator and keywords', () => {
    const brennock = readSample('brennock-oral-bid');
    const outcome = build(brennock);
    const info = pdfInfo(outcome.bytes);
    expect(info.Title).toBe('Brennock 400 mg by mouth twice daily — concentration report');
    expect(info.Subject).toContain('not dosing advice');
    expect(info.Author).toBe(`Tidemark ${version}`);
    expect(info.Creator).toBe(`Tidemark ${version}`);
    expect(info.Keywords).toContain(`fingerprint ${outcome.fingerprint}`);
    expect(info.Keywords).toContain('pharmacokinetics');
    expect(info.CreationDate).toContain('2031');
  });

  it('embeds its fonts, so text is real and searchable', () => {
    const outcome = build(readSample('brennock-oral-bid'));
    const raw = Buffer.from(outcome.bytes).toString('latin1');
    expect(raw).toMatch(/\/FontFile2/);
    expect(raw).toMatch(/DejaVuSans/);
    expect(raw).not.toMatch(/\/BaseFont \/Helvetica/);
  });
});

describe('long regimens', () => {
  function daily(doses: number) {
    const s = structuredClone(readSample('brennock-oral-bid')) as Record<string, unknown> & { doses: Record<string, unknown>[]; output: Record<string, unknown> };
    s.title = `Brennock once daily, ${doses} doses`;
    s.doses[0] = { ...s.doses[0], every: '24 h', count: doses };
    s.output = { ...s.output, end: `${doses} day`, step: '2 h' };
    return s;
  }

  let shortPages: string[];
  let longPages: string[];
  beforeAll(() => {
    shortPages = pdfPages(build(daily(60)).bytes);
    longPages = pdfPages(build(daily(365)).bytes);
  }, 120_000);

  it('take more pages for more doses', () => {
    expect(shortPages.length).toBeGreaterThanOrEqual(2);
    // 305 more table rows at well under 60 rows a page: at least 5 more pages.
    expect(longPages.length).toBeGreaterThanOrEqual(shortPages.length + 5);
  });

  it('list the regimen as one line, not dose by dose', () => {
    const text = longPages.join('\n').replace(/\s+/g, ' ');
    expect(text).toContain('400 mg into gut every 24 h × 365 from 0 h, F 0.85, lag 20 min');
  });

  it('split the per-interval table over pages with its header repeated and every row once', () => {
    const tablePages = longPages.filter((p) => p.includes('Per-interval figures — central'));
    expect(tablePages.length).toBeGreaterThanOrEqual(5);
    tablePages.slice(1).forEach((page) => {
      expect(page).toContain('Per-interval figures — central (continued)');
      expect(page).toMatch(/#\s+Start\s+End\s+Cmax\s+Tmax\s+Trough\s+AUC\s+Cavg\s+Fluct\.\s+%\s+In window/);
    });
    const rows = tablePages.join('\n').match(/^\s*(\d+)\s+\d[\d.e+-]*\s+\d[\d.e+-]*\s+\d[\d.e+-]*\s+\d[\d.e+-]*\s+(?:[\d.e+-]+|—)\s+\d/gm) ?? [];
    const numbers = rows.map((r) => Number(/^\s*(\d+)/.exec(r)?.[1]));
    expect(numbers).toEqual(Array.from({ length: 365 }, (_, i) => i + 1));
  });
});
