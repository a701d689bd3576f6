// The page's features beyond building and running a model (tests/browser/page.test.ts does
// that), in Debian's Chromium against the real server: save/open JSON round trip, CSV
// export, compare with a kept reference, plot controls (log axis, zoom), the PDF report,
// keyboard-only use, and the layout at a narrow and a wide window. One server and one
// browser for the file; each test opens its own page, which loads and runs the default
// sample (the fictional brennock, samples/brennock-oral-bid.json) by itself.
// Screenshots go to tests/artifacts/browser/features-*.png (git-ignored).
import { execFileSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { Browser, BrowserContext, Page } from 'playwright-core';
import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import type { SimulationResultJson } from '../../models/result/result-format.ts';
import { fmt } from '../../models/result/summary-text.ts';
import { artifactPath, ensureClientBuilt, launchChromium, startServer, type RunningServer } from './harness.ts';
import { afterNewResult, captureDownload, field, openApp, runAndWait, typeInto, type PageRecord } from './page-helpers.ts';

// A browser, a server and a build: generous, and the same for every step (no speed is tested).
const stepTimeout = 120_000;
const sampleId = 'brennock-oral-bid';

let server: RunningServer | null = null;
let browser: Browser | null = null;
let context: BrowserContext;
let tempDir: string;
/** The sample as the server hands it out (what every fresh page starts from). */
let sample: Record<string, unknown>;
/** Pages opened by the current test, closed after it. */
const openPages: Page[] = [];

beforeAll(async () => {
  ensureClientBuilt();
  browser = await launchChromium();
  server = await startServer();
  tempDir = mkdtempSync(join(tmpdir(), 'tidemark-features-'));
  sample = (await fetch(new URL(`api/samples/${sampleId}`, server.baseUrl)).then((r) => r.json())) as Record<string, unknown>;
  // The pool's workers load the engine when they start; one run here waits for that.
  const warm = await simulateViaApi(sample);
  if (!warm.metrics) throw new Error('the server did not simulate the sample');
  context = await browser.newContext({ viewport: { width: 1366, height: 900 }, deviceScaleFactor: 1, acceptDownloads: true });
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

async function simulateViaApi(scenario: unknown): Promise<SimulationResultJson> {
  const res = await fetch(new URL('api/simulate', server!.baseUrl), { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify(scenario) });
  if (res.status !== 200) throw new Error(`POST /api/simulate answered ${res.status}: ${await res.text()}`);
  return (await res.json()) as SimulationResultJson;
}

/** A fresh page with the default sample loaded and run; its errors are checked by `noPageErrors`. */
async function freshPage(viewport?: { width: number; height: number }): Promise<{ page: Page; record: PageRecord }> {
  const opened = await openApp(context, server!.baseUrl, viewport);
  openPages.push(opened.page);
  return opened;
}

function noPageErrors(record: PageRecord): void {
  expect(record.pageErrors, 'uncaught exceptions in the page').toEqual([]);
  expect(record.consoleErrors.map((e) => e.text), 'console errors').toEqual([]);
}

const scenarioOf = (page: Page) => page.evaluate(() => JSON.parse(JSON.stringify(window.__tidemark.scenario)) as Record<string, unknown>);
const resultOf = (page: Page) => page.evaluate(() => window.__tidemark.lastResult as SimulationResultJson);

/** pdftotext's text of a PDF, whitespace runs folded to one space (titles may wrap). */
function pdfText(bytes: Buffer, name: string): string {
  const path = join(tempDir, name);
  writeFileSync(path, bytes);
  return execFileSync('pdftotext', ['-enc', 'UTF-8', path, '-'], { encoding: 'utf8' }).replace(/\s+/g, ' ');
}

// A scenario for the fictional compound brenolide with everything the form does not show or
// does not rewrite: a description, labels on compartments, transfers and doses, explicit
// output times (one off the step grid), solver settings with maxSteps, and a day-based unit
// system with quantities in min, h and day. It is valid, so opening it runs it.
const brenolide = {
  title: 'Brenolide loading infusion then daily oral doses',
  description: 'Three-compartment model of the fictional compound brenolide: a 45-minute loading infusion, then 100 mg by mouth once a day.',
  units: { amount: 'mg', volume: 'L', time: 'day' },
  compartments: [
    { id: 'gut', label: 'Gut depot' },
    { id: 'central', label: 'Plasma', volume: '36 L' },
    { id: 'tissue', label: 'Deep tissue', volume: '80 L' },
  ],
  transfers: [
    { from: 'gut', to: 'central', k: '1.2 1/h', label: 'absorption' },
    { from: 'central', to: 'tissue', k: '0.25 1/h', label: 'distribution' },
    { from: 'tissue', to: 'central', k: '0.1 1/h', label: 'redistribution' },
    { from: 'central', cl: '90 mL/min', label: 'clearance' },
  ],
  doses: [
    { into: 'central', amount: '250 mg', at: 0, duration: '45 min', label: 'loading' },
    { into: 'gut', amount: '100 mg', at: '1 day', every: '24 h', through: '6 day', bioavailability: 0.7, lag: '30 min', label: 'maintenance' },
  ],
  output: { start: 0, end: 7, step: '30 min', times: ['100 min', '36 h', 2.51], thresholds: [{ compartment: 'central', above: '1 mg/L', below: '6 mg/L' }] },
  solver: { method: 'auto', rtol: 1e-9, atol: 1e-12, maxSteps: 200_000 },
};

describe('page features in Chromium', () => {
  it('saves exactly the scenario it opened, and after one edit only that field differs', async () => {
    const { page, record } = await freshPage();
    const file = join(tempDir, 'brenolide.json');
    writeFileSync(file, `${JSON.stringify(brenolide, null, 2)}\n`);
    await afterNewResult(page, () => page.getByTestId('open-json').setInputFiles(file));

    // The file is what the page holds and what it ran: its title, and an output time that
    // is not on the 30-min step grid (100 min = 100/1440 day; relative 1e-12 covers the
    // rounding of the unit conversion, while the nearest grid times are 10 min away).
    expect(await field(page, 'title').inputValue()).toBe(brenolide.title);
    const opened = await resultOf(page);
    expect(opened.title).toBe(brenolide.title);
    expect(opened.units.time).toBe('day');
    expect(opened.times.some((t) => Math.abs(t - 100 / 1440) <= 1e-12 * (100 / 1440))).toBe(true);

    const first = await captureDownload(page, () => page.getByTestId('save-json').click());
    expect(first.filename).toBe('brenolide-loading-infusion-then-daily-oral-doses.json');
    expect(JSON.parse(first.bytes.toString('utf8'))).toStrictEqual(brenolide);

    // One edit through the form: the tissue volume, typed as a user does (unit stays L).
    await typeInto(page, 'compartments[2].volume', '95');
    const second = await captureDownload(page, () => page.getByTestId('save-json').click());
    const expected = structuredClone(brenolide);
    expected.compartments[2].volume = '95 L';
    expect(JSON.parse(second.bytes.toString('utf8'))).toStrictEqual(expected);
    await page.screenshot({ path: artifactPath('features-01-opened-file.png'), fullPage: true });
    noPageErrors(record);
  }, stepTimeout);

  it('exports the curves as CSV: compartments with units in the header, one row per reported time', async () => {
    const { page, record } = await freshPage();
    const result = await resultOf(page);
    const csv = await captureDownload(page, () => page.getByTestId('export-csv').click());
    expect(csv.filename).toMatch(/\.csv$/);
    const lines = csv.bytes.toString('utf8').replace(/\n$/, '').split('\n');
    expect(lines.length).toBe(result.times.length + 1);

    const header = lines[0].split(',');
    // The sample's units (mg, L, h); the gut depot has no volume, so no concentration column.
    expect(header).toEqual(['time (h)', 'gut amount (mg)', 'central amount (mg)', 'central concentration (mg/L)']);
    expect(Object.keys(result.compartments)).toEqual(['gut', 'central']);

    // The row of the peak: its time and concentration are the result's. Exact: String() of a
    // double gives the shortest text that reads back as the same double (ECMAScript Number::toString).
    const conc = result.compartments.central.concentration!;
    const r = conc.indexOf(Math.max(...conc));
    expect(conc[r]).toBeGreaterThan(0);
    const cells = lines[r + 1].split(',');
    expect(Number(cells[0])).toBe(result.times[r]);
    expect(Number(cells[3])).toBe(conc[r]);
    expect(Number(cells[2])).toBe(result.compartments.central.amount[r]);
    noPageErrors(record);
  }, stepTimeout);

  it('compares with a kept reference: dashed curves beside the current ones, both Cmax side by side, cleared again', async () => {
    const { page, record } = await freshPage();
    expect(await scenarioOf(page)).toStrictEqual(sample);
    await page.getByTestId('keep-reference').click();
    await typeInto(page, 'doses[0].amount', '600');
    expect(await runAndWait(page)).toBe(200);

    const datasets = await page.evaluate(() =>
      window.__tidemark.chart.data.datasets.map((d) => ({ label: d.label ?? '', dash: Array.isArray(d.borderDash) ? d.borderDash.length : 0, points: d.data.length })),
    );
    const dashed = datasets.filter((d) => d.dash > 0);
    const solid = datasets.filter((d) => d.dash === 0);
    expect(dashed.map((d) => d.label)).toEqual(['central — reference']);
    expect(solid.map((d) => d.label)).toEqual(['central (Plasma)']);
    for (const d of datasets) expect(d.points, d.label).toBeGreaterThan(0);

    // Each figure is fmt() of the API's answer for the scenario it came from.
    const current = await scenarioOf(page);
    expect((current.doses as { amount: unknown }[])[0].amount).toBe('600 mg');
    const [refApi, curApi] = await Promise.all([simulateViaApi(sample), simulateViaApi(current)]);
    const refCmax = refApi.metrics.compartments.central.overall.cmax;
    const curCmax = curApi.metrics.compartments.central.overall.cmax;
    // Linear model on the same time grid: Cmax scales with the dose (superposition, common
    // practice); 1e-9 relative is far above the rounding of the exact solution.
    expect(Math.abs(curCmax / refCmax - 1.5)).toBeLessThan(1e-9);
    const refShown = page.getByTestId('ref-cmax-central');
    const curShown = page.getByTestId('cmax-central');
    expect(await refShown.textContent()).toBe(fmt(refCmax));
    expect(await curShown.textContent()).toBe(fmt(curCmax));
    expect(fmt(refCmax)).not.toBe(fmt(curCmax));
    // Side by side: the same table row.
    expect(await refShown.evaluate((el) => el.closest('tr') !== null && el.closest('tr') === document.querySelector('[data-testid="cmax-central"]')?.closest('tr'))).toBe(true);
    await page.getByTestId('plot').scrollIntoViewIfNeeded();
    await page.screenshot({ path: artifactPath('features-03-compare.png') });

    await page.getByTestId('clear-reference').click();
    await expect.poll(() => page.evaluate(() => window.__tidemark.chart.data.datasets.map((d) => d.label))).toEqual(['central (Plasma)']);
    expect(await page.getByTestId('ref-cmax-central').count()).toBe(0);
    expect(await curShown.textContent()).toBe(fmt(curCmax));
    noPageErrors(record);
  }, stepTimeout);

  it('plot controls: log y axis, zoom to one dosing interval, to the last one, and back to the whole span', async () => {
    const { page, record } = await freshPage();
    const result = await resultOf(page);
    const intervals = result.metrics.compartments.central.intervals;
    // 14 doses 12 h apart over 7 days (the sample): 14 dosing intervals.
    expect(intervals.length).toBe(14);
    const axes = () =>
      page.evaluate(() => {
        const c = window.__tidemark.chart;
        return { yType: c.scales.y.type, yOption: c.options.scales?.y?.type, xMin: c.scales.x.min, xMax: c.scales.x.max };
      });
    expect((await axes()).yType).toBe('linear');

    await page.locator('#y-log').check();
    await expect.poll(async () => (await axes()).yType).toBe('logarithmic');
    expect((await axes()).yOption).toBe('logarithmic');

    // Interval 3, typed into the interval box (change fires when the box is left).
    const box = page.locator('#zoom-interval');
    await box.click();
    await box.press('ControlOrMeta+a');
    await box.pressSequentially('3');
    await box.press('Tab');
    await expect.poll(async () => [(await axes()).xMin, (await axes()).xMax]).toEqual([intervals[2].start, intervals[2].end]);
    expect([intervals[2].start, intervals[2].end]).toEqual([24, 36]);
    await page.getByTestId('plot').scrollIntoViewIfNeeded();
    await page.screenshot({ path: artifactPath('features-04-interval-log.png') });

    await page.locator('#zoom-steady').click();
    const last = intervals[intervals.length - 1];
    await expect.poll(async () => [(await axes()).xMin, (await axes()).xMax]).toEqual([last.start, last.end]);
    expect(await page.locator('#zoom-steady').getAttribute('aria-pressed')).toBe('true');
    expect(await box.inputValue()).toBe(String(intervals.length));

    await page.locator('#zoom-all').click();
    await expect.poll(async () => [(await axes()).xMin, (await axes()).xMax]).toEqual([result.times[0], result.times[result.times.length - 1]]);
    expect(await page.locator('#zoom-all').getAttribute('aria-pressed')).toBe('true');

    await page.locator('#y-linear').check();
    await expect.poll(async () => (await axes()).yType).toBe('linear');
    noPageErrors(record);
  }, stepTimeout);

  it('downloads the report as a PDF with the title and the caution', async () => {
    const { page, record } = await freshPage();
    const title = String(sample.title);
    const pdf = await captureDownload(page, () => page.getByTestId('download-report').click());
    expect(pdf.filename).toMatch(/\.pdf$/);
    expect(pdf.bytes.subarray(0, 5).toString('latin1')).toBe('%PDF-');
    const text = pdfText(pdf.bytes, 'report-plain.pdf');
    expect(text).toContain(title);
    expect(text).toContain('not dosing advice');
    // No reference was kept, so the report never mentions one.
    expect(text).not.toMatch(/\breference\b/i);
    noPageErrors(record);
  }, stepTimeout);

  it('downloads the report with the kept reference named in it', async () => {
    const { page, record } = await freshPage();
    const refTitle = String(sample.title);
    await page.getByTestId('keep-reference').click();
    const newTitle = 'Brennock 600 mg by mouth twice daily, higher dose';
    await typeInto(page, 'title', newTitle);
    await typeInto(page, 'doses[0].amount', '600');
    const pdf = await captureDownload(page, () => page.getByTestId('download-report').click());
    expect(pdf.filename).toMatch(/\.pdf$/);
    expect(pdf.bytes.subarray(0, 5).toString('latin1')).toBe('%PDF-');
    const text = pdfText(pdf.bytes, 'report-reference.pdf');
    expect(text).toContain(newTitle);
    expect(text).toContain('not dosing advice');
    expect(text).toMatch(/\breference\b/i);
    expect(text).toContain(refTitle);
    // The comparison section names the reference by its title.
    expect(text).toContain(`Compared with the reference “${refTitle}”`);
    noPageErrors(record);
  }, stepTimeout);

  it('works from the keyboard alone: Tab to the end time, type, Enter runs; focused buttons show an outline', async () => {
    const { page, record } = await freshPage();
    const before = await resultOf(page);
    expect(before.times[before.times.length - 1]).toBe(168); // the sample's 7 days, in h

    const active = () => page.evaluate(() => {
      const el = document.activeElement as HTMLElement | null;
      return { id: el?.id ?? '', path: el?.dataset.path ?? '', tag: el?.tagName ?? '' };
    });
    /** Presses Tab until the focused element passes `found`, at most 300 times. */
    const tabTo = async (found: (a: Awaited<ReturnType<typeof active>>) => boolean, seen?: (a: Awaited<ReturnType<typeof active>>) => Promise<void>) => {
      for (let i = 0; i < 300; i++) {
        await page.keyboard.press('Tab');
        const a = await active();
        if (seen) await seen(a);
        if (found(a)) return a;
      }
      throw new Error('Tab did not reach the element in 300 presses');
    };
    const focusStyle = () =>
      page.evaluate(() => {
        const el = document.activeElement as HTMLElement;
        const s = getComputedStyle(el);
        return { focusVisible: el.matches(':focus-visible'), outlineStyle: s.outlineStyle, outlineWidth: parseFloat(s.outlineWidth), outlineColor: s.outlineColor, boxShadow: s.boxShadow };
      });
    const visible = (s: Awaited<ReturnType<typeof focusStyle>>) =>
      s.focusVisible && ((s.outlineStyle !== 'none' && s.outlineWidth >= 2 && !/rgba\(.*,\s*0\)$/.test(s.outlineColor)) || s.boxShadow !== 'none');

    // On the way through the header: the Save JSON button.
    const styles = new Map<string, Awaited<ReturnType<typeof focusStyle>>>();
    await tabTo(
      (a) => a.path === 'output.end',
      async (a) => {
        if (a.id === 'save-json') styles.set(a.id, await focusStyle());
      },
    );
    const headerStyle = styles.get('save-json');
    expect(headerStyle, 'Tab passed the Save JSON button').toBeDefined();
    expect(visible(headerStyle!), `focus style of Save JSON: ${JSON.stringify(headerStyle)}`).toBe(true);

    // The end time is shown as 7 with the unit "day"; 3 gives "3 day".
    await page.keyboard.press('ControlOrMeta+a');
    await page.keyboard.type('3');
    await afterNewResult(page, () => page.keyboard.press('Enter'));
    expect(await page.evaluate(() => window.__tidemark.scenario.output?.end)).toBe('3 day');
    const after = await resultOf(page);
    expect(after.times[after.times.length - 1]).toBe(72);
    expect(await page.locator('#run-status').textContent()).toMatch(/^Done in/);

    const run = await tabTo((a) => a.id === 'run');
    expect(run.tag).toBe('BUTTON');
    const runStyle = await focusStyle();
    expect(visible(runStyle), `focus style of Run: ${JSON.stringify(runStyle)}`).toBe(true);
    // The outline belongs to focus: the same kind of button without focus has none.
    expect(await page.getByTestId('keep-reference').evaluate((el) => getComputedStyle(el).outlineStyle)).toBe('none');
    await page.screenshot({ path: artifactPath('features-06-keyboard-focus.png') });
    noPageErrors(record);
  }, stepTimeout);

  it('fits a narrow window without sideways scrolling, caution visible; at 1280×800 the plot fits across', async () => {
    const { page, record } = await freshPage({ width: 420, height: 900 });
    const layout = () =>
      page.evaluate(() => {
        const d = document.documentElement;
        const caution = document.querySelector('.caution')!.getBoundingClientRect();
        return { scrollWidth: d.scrollWidth, clientWidth: d.clientWidth, caution: { left: caution.left, right: caution.right, top: caution.top, height: caution.height } };
      });
    const narrow = await layout();
    expect(narrow.clientWidth).toBeLessThanOrEqual(420);
    expect(narrow.scrollWidth, 'document width at 420 px').toBeLessThanOrEqual(narrow.clientWidth + 1);
    expect(await page.locator('.caution').isVisible()).toBe(true);
    expect(await page.locator('.caution').textContent()).toContain('not dosing advice');
    // On the first screen and within the width.
    expect(narrow.caution.height).toBeGreaterThan(0);
    expect(narrow.caution.left).toBeGreaterThanOrEqual(0);
    expect(narrow.caution.right).toBeLessThanOrEqual(narrow.clientWidth + 1);
    expect(narrow.caution.top).toBeLessThan(900);
    await page.screenshot({ path: artifactPath('features-07-narrow.png'), fullPage: true });

    // With a reference kept the figures gain a column per table: still no sideways scrolling.
    await page.getByTestId('keep-reference').click();
    await typeInto(page, 'doses[0].amount', '600');
    expect(await runAndWait(page)).toBe(200);
    expect(await page.getByTestId('ref-cmax-central').count()).toBe(1);
    const narrowRef = await layout();
    expect(narrowRef.scrollWidth, 'document width at 420 px with a reference').toBeLessThanOrEqual(narrowRef.clientWidth + 1);
    await page.screenshot({ path: artifactPath('features-07-narrow-reference.png'), fullPage: true });

    await page.setViewportSize({ width: 1280, height: 800 });
    await page.waitForFunction(() => document.documentElement.clientWidth > 1000);
    const plot = page.getByTestId('plot');
    await plot.scrollIntoViewIfNeeded();
    const wide = await plot.evaluate((el) => {
      const r = el.getBoundingClientRect();
      const d = document.documentElement;
      return { left: r.left, right: r.right, top: r.top, bottom: r.bottom, width: r.width, scrollX: window.scrollX, scrollWidth: d.scrollWidth, clientWidth: d.clientWidth, innerHeight: window.innerHeight };
    });
    expect(await plot.isVisible()).toBe(true);
    expect(wide.scrollX).toBe(0);
    expect(wide.scrollWidth, 'document width at 1280 px').toBeLessThanOrEqual(wide.clientWidth + 1);
    expect(wide.width).toBeGreaterThan(300);
    expect(wide.left).toBeGreaterThanOrEqual(0);
    expect(wide.right).toBeLessThanOrEqual(wide.clientWidth);
    expect(wide.top).toBeGreaterThanOrEqual(0);
    expect(wide.bottom).toBeLessThanOrEqual(wide.innerHeight);
    await page.screenshot({ path: artifactPath('features-07-wide.png') });
    noPageErrors(record);
  }, stepTimeout);
});
