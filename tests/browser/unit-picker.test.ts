// The unit picker converts: choosing another unit changes the number so that the quantity
// stays the same, with a note beside the field; the simulation is unchanged. Before, the
// picker relabelled the number ("0.9 per hr" became "0.9 1/min", a 60-fold faster absorption).
// The page's conversion tables are checked against mathjs (an independent unit library),
// then the page itself in Debian's Chromium against the real server.
// Screenshot: tests/artifacts/browser/unit-picker-converted.png (git-ignored).
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { unit } from 'mathjs';
import type { Browser, BrowserContext, Page } from 'playwright-core';
import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import { convertUnit, unitChoices, type Dim } from '../../client/src/quantity.ts';
import type { SimulationResultJson } from '../../models/result/result-format.ts';
import { artifactPath, ensureClientBuilt, launchChromium, repoRoot, startServer, type RunningServer } from './harness.ts';
import { afterNewResult, field, openApp, runAndWait, unitOf, type PageRecord } from './page-helpers.ts';

/** mathjs's spelling of a picker unit ("1/h" is a reciprocal hour to it only as "h^-1"). */
const mathjsUnit = (u: string) => (u.startsWith('1/') ? `${u.slice(2)}^-1` : u);

describe('the page conversion tables against mathjs', () => {
  it('every pair of units a picker offers converts as mathjs does, to 1e-14 relative', () => {
    // 15 significant digits kept by convertUnit, and mathjs's own rounding: 1e-14 covers both.
    for (const [dim, units] of Object.entries(unitChoices) as [Dim, string[]][]) {
      for (const from of units) {
        for (const to of units) {
          const value = 0.9;
          const ours = convertUnit(value, from, to, dim);
          const theirs = unit(value, mathjsUnit(from)).toNumber(mathjsUnit(to));
          expect(ours, `${dim}: ${from} → ${to}`).not.toBeNull();
          expect(Math.abs((ours as number) - theirs) / theirs, `${dim}: ${from} → ${to}`).toBeLessThan(1e-14);
        }
      }
    }
  });

  it('the spellings a file may hold for a rate constant convert too; an unknown unit gives null', () => {
    for (const spelling of ['1/hr', '/h', 'h^-1', 'hr-1', 'per hr', 'per hour', '1 / h']) {
      expect(convertUnit(0.9, spelling, '1/min', 'rateConstant'), spelling).toBe(0.015);
    }
    expect(convertUnit(42, 'cL', 'mL', 'volume')).toBeNull();
    expect(convertUnit(4, 'mg/L', 'mmol/L', 'concentration')).toBeNull();
  });
});

const stepTimeout = 120_000;
let server: RunningServer | null = null;
let browser: Browser | null = null;
let context: BrowserContext;
let tempDir: string;
const openPages: Page[] = [];

beforeAll(async () => {
  ensureClientBuilt();
  browser = await launchChromium();
  server = await startServer();
  tempDir = mkdtempSync(join(tmpdir(), 'tidemark-unit-picker-'));
  context = await browser.newContext({ viewport: { width: 1366, height: 900 }, deviceScaleFactor: 1 });
}, 180_000);

afterEach(async () => {
  for (const p of openPages.splice(0)) await p.close();
});

afterAll(async () => {
  await context?.close();
  await browser?.close();
  await server?.close();
  if (tempDir) rmSync(tempDir, { recursive: true, force: true });
});

async function freshPage(): Promise<{ page: Page; record: PageRecord }> {
  const opened = await openApp(context, server!.baseUrl);
  openPages.push(opened.page);
  return opened;
}

const scenarioOf = (page: Page) => page.evaluate(() => JSON.parse(JSON.stringify(window.__tidemark.scenario)) as Record<string, unknown>);
const resultOf = (page: Page) => page.evaluate(() => window.__tidemark.lastResult as SimulationResultJson);
const noteOf = (page: Page, path: string) => page.locator(`[data-unit-note-for="${path}"]`);

/** Largest difference between two series relative to the larger series' largest magnitude. */
function relativeGap(a: number[], b: number[]): number {
  expect(a.length).toBe(b.length);
  const scale = Math.max(...a.map(Math.abs), ...b.map(Math.abs));
  return Math.max(...a.map((x, i) => Math.abs(x - b[i]))) / scale;
}

describe('the unit picker on the page', () => {
  it(
    'converts the number (0.9 1/h → 0.015 1/min and three more), says so beside the field, and the simulation is unchanged',
    async () => {
      const { page, record } = await freshPage();
      const before = await resultOf(page);

      // The brennock sample: k 0.9 1/h, CL 4.2 L/h, V 42 L, lag 20 min.
      const changes: [path: string, to: string, number: string, note: string][] = [
        ['transfers[0].k', '1/min', '0.015', 'converted 0.9 1/h → 0.015 1/min'],
        ['transfers[1].cl', 'mL/min', '70', 'converted 4.2 L/h → 70 mL/min'],
        ['compartments[1].volume', 'mL', '42000', 'converted 42 L → 42000 mL'],
        // 20 min = 1/3 h, kept to 15 significant digits.
        ['doses[0].lag', 'h', '0.333333333333333', 'converted 20 min → 0.333333333333333 h'],
      ];
      for (const [path, to, number, note] of changes) {
        await unitOf(page, path).selectOption(to);
        expect(await field(page, path).inputValue(), path).toBe(number);
        await expect.poll(() => noteOf(page, path).textContent()).toBe(note);
        expect(await noteOf(page, path).isVisible()).toBe(true);
      }
      const scenario = await scenarioOf(page);
      expect((scenario.transfers as { k?: string; cl?: string }[])[0].k).toBe('0.015 1/min');
      expect((scenario.transfers as { k?: string; cl?: string }[])[1].cl).toBe('70 mL/min');
      expect((scenario.compartments as { volume?: string }[])[1].volume).toBe('42000 mL');
      expect((scenario.doses as { lag?: string }[])[0].lag).toBe('0.333333333333333 h');

      await page.screenshot({ path: artifactPath('unit-picker-converted.png'), fullPage: false });

      expect(await runAndWait(page)).toBe(200);
      const after = await resultOf(page);
      // The same quantities, written in other units: the inputs differ by at most 1e-15
      // relative (15 digits kept) and the exact path is smooth in them, so 1e-10 is generous
      // while a relabelling (60× the absorption rate, 1/1000 the volume) is off by far more.
      expect(after.times.length).toBe(before.times.length);
      expect(relativeGap(after.times, before.times)).toBeLessThan(1e-12);
      const c = (r: SimulationResultJson) => r.compartments.central.concentration as number[];
      expect(relativeGap(c(after), c(before))).toBeLessThan(1e-10);
      const auc = (r: SimulationResultJson) => r.metrics.compartments.central.overall.auc as number;
      expect(Math.abs(auc(after) - auc(before)) / auc(before)).toBeLessThan(1e-10);

      // Typing a new number removes the note, which was about the number before.
      await field(page, 'transfers[0].k').fill('0.02');
      expect(await noteOf(page, 'transfers[0].k').isVisible()).toBe(false);
      expect(record.pageErrors).toEqual([]);
      expect(record.consoleErrors.map((e) => e.text)).toEqual([]);
    },
    stepTimeout,
  );

  it(
    'a unit from a file that the page cannot convert keeps the number and says so',
    async () => {
      const { page, record } = await freshPage();
      const sample = JSON.parse(readFileSync(join(repoRoot, 'samples/brennock-oral-bid.json'), 'utf8'));
      sample.compartments[1].volume = '4200 cL'; // centilitres: mathjs reads them, the page's tables do not
      const file = join(tempDir, 'centilitres.json');
      writeFileSync(file, JSON.stringify(sample));
      await afterNewResult(page, () => page.getByTestId('open-json').setInputFiles(file));
      await unitOf(page, 'compartments[1].volume').selectOption('L');
      expect(await field(page, 'compartments[1].volume').inputValue()).toBe('4200');
      await expect.poll(() => noteOf(page, 'compartments[1].volume').textContent()).toBe('4200 kept as it was: the page cannot convert cL to L; check the number');
      expect(record.pageErrors).toEqual([]);
    },
    stepTimeout,
  );
});
