// The web page in a real browser (Debian's Chromium through playwright-core) against the
// real server: a two-compartment model with a repeated infusion built from an empty form by
// typing, run, plotted and summed up in the figures; a negative volume shown beside its
// field; no console errors and no Content-Security-Policy violations on the way.
// Screenshots of each step go to tests/artifacts/browser/ (git-ignored).
import type { Browser, BrowserContext, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { SimulationResultJson } from '../../models/result/result-format.ts';
import { fmt } from '../../models/result/summary-text.ts';
import { artifactPath, ensureClientBuilt, launchChromium, startServer, type RunningServer } from './harness.ts';
import { choose, field, plotPixels, recordPage, runAndWait, typeInto, unitOf, type PageRecord } from './page-helpers.ts';

// A browser, a server and a build: generous, and the same for every step (no speed is tested).
const stepTimeout = 120_000;

let server: RunningServer | null = null;
let browser: Browser | null = null;
let context: BrowserContext;
let page: Page;
let record: PageRecord;
/** Set once the model has been built and run, so later steps say why they cannot go on. */
let built = false;

beforeAll(async () => {
  ensureClientBuilt();
  browser = await launchChromium();
  server = await startServer();
  // The pool's workers load the engine when they start; one run here waits for that, so
  // the first page step does not carry it.
  const warm = await fetch(new URL('api/samples/brennock-oral-bid', server.baseUrl)).then((r) => r.text());
  const warmRun = await fetch(new URL('api/simulate', server.baseUrl), { method: 'POST', headers: { 'content-type': 'application/json' }, body: warm });
  if (warmRun.status !== 200) throw new Error(`the server did not simulate a sample (status ${warmRun.status}): ${await warmRun.text()}`);
  context = await browser.newContext({ viewport: { width: 1366, height: 900 }, deviceScaleFactor: 1, acceptDownloads: false });
  page = await context.newPage();
  // Waits are for events, not fixed sleeps; the bound only ends a run that hangs (2 cores, often busy).
  page.setDefaultTimeout(60_000);
  record = await recordPage(page);
}, 180_000);

afterAll(async () => {
  await context?.close();
  await browser?.close();
  await server?.close();
});

async function shot(name: string): Promise<void> {
  await page.screenshot({ path: artifactPath(name), fullPage: true });
}

/** One element, cut from a full-page capture so the sticky notice at the top does not cover it. */
async function shotOf(testId: string, name: string): Promise<void> {
  const clip = await page.getByTestId(testId).evaluate((el) => {
    const r = el.getBoundingClientRect();
    return { x: r.left + window.scrollX, y: r.top + window.scrollY, width: r.width, height: r.height };
  });
  await page.screenshot({ path: artifactPath(name), fullPage: true, clip });
}

// The scenario a user types below, for the fictional compound Quorvane. Quantities are
// stored as "<number> <unit>" strings by the form; the count as a number.
const typedScenario = {
  title: 'Quorvane 500 mg over 30 min every 12 h',
  units: { amount: 'mg', volume: 'L', time: 'h' },
  compartments: [
    { id: 'central', label: 'Plasma', volume: '14 L' },
    { id: 'peripheral', volume: '30 L' },
  ],
  transfers: [
    { from: 'central', to: 'peripheral', k: '0.6 1/h' },
    { from: 'peripheral', to: 'central', k: '0.3 1/h' },
    { from: 'central', cl: '3 L/h' },
  ],
  doses: [{ into: 'central', amount: '500 mg', at: 0, duration: '30 min', every: '12 h', count: 4 }],
  // The new model's output step, in hours like every other time of the form (issue 10).
  output: { end: '60 h', step: '0.25 h', thresholds: [] },
};

describe('the web page in Chromium', () => {
  it('opens with the default sample run, then clears to an empty scenario', async () => {
    await page.goto(server!.baseUrl, { waitUntil: 'networkidle' });
    // The page opens a sample and runs it by itself; wait for that run before clearing,
    // so its answer cannot land on top of the new model.
    await page.waitForFunction(() => window.__tidemark.lastResult !== null);
    await expect.poll(() => page.locator('#run-status').textContent()).toMatch(/^Done in/);
    await shot('01-sample-loaded.png');

    await page.getByTestId('new-model').click();
    await page.waitForFunction(() => window.__tidemark.lastResult === null && (window.__tidemark.scenario.compartments ?? []).length === 0);
    expect(await page.locator('[data-path^="compartments["]').count()).toBe(0);
    expect(await page.locator('[data-path^="doses["]').count()).toBe(0);
    expect(await page.evaluate(() => window.__tidemark.chart.data.datasets.length)).toBe(0);
    await shot('02-new-model-empty.png');
  }, stepTimeout);

  it('builds a two-compartment model with a repeated infusion through the form and runs it', async () => {
    await typeInto(page, 'title', typedScenario.title);

    // Two compartments: the first is named "central" by the page; the second is renamed.
    await page.getByTestId('add-compartment').click();
    await expect.poll(() => field(page, 'compartments[0].id').inputValue()).toBe('central');
    await typeInto(page, 'compartments[0].label', 'Plasma');
    await typeInto(page, 'compartments[0].volume', '14');
    await page.getByTestId('add-compartment').click();
    await typeInto(page, 'compartments[1].id', 'peripheral');
    await typeInto(page, 'compartments[1].volume', '30');

    // Distribution pair central ⇄ peripheral, rate constants.
    await page.getByTestId('add-transfer').click();
    await choose(page, 'transfers[0].from', 'central');
    await choose(page, 'transfers[0].to', 'peripheral');
    await typeInto(page, 'transfers[0].k', '0.6');
    await page.getByTestId('add-transfer').click();
    await choose(page, 'transfers[1].from', 'peripheral');
    await choose(page, 'transfers[1].to', 'central');
    await typeInto(page, 'transfers[1].k', '0.3');
    // Elimination from central as a clearance (the kinetics picker, then its value).
    await page.getByTestId('add-transfer').click();
    await choose(page, 'transfers[2].from', 'central');
    await choose(page, 'transfers[2].to', '');
    await choose(page, 'transfers[2]', 'cl');
    await typeInto(page, 'transfers[2].cl', '3');
    await expect.poll(() => unitOf(page, 'transfers[2].cl').inputValue()).toBe('L/h');
    await shot('03-model-built.png');

    // Repeated infusion into central: 500 mg over 30 min, every 12 h, 4 doses.
    await page.getByTestId('add-dose').click();
    await choose(page, 'doses[0].into', 'central');
    await typeInto(page, 'doses[0].amount', '500');
    await choose(page, 'doses[0]', 'duration');
    // The unit first: the picker converts a number already typed (30 h would become 1800 min).
    await unitOf(page, 'doses[0].duration').selectOption('min');
    await typeInto(page, 'doses[0].duration', '30');
    await typeInto(page, 'doses[0].every', '12');
    await typeInto(page, 'doses[0].count', '4');
    await typeInto(page, 'output.end', '60');
    await shot('04-regimen-entered.png');

    // What the form wrote is exactly what was typed.
    expect(await page.evaluate(() => JSON.parse(JSON.stringify(window.__tidemark.scenario)) as unknown)).toEqual(typedScenario);

    expect(await runAndWait(page)).toBe(200);
    await expect.poll(() => page.locator('#run-status').textContent()).toMatch(/^Done in .*exact solution/);
    await expect.poll(() => page.getByTestId('error-summary').isHidden()).toBe(true);
    built = true;
    await shot('05-run-result.png');
  }, stepTimeout);

  it('plots the run: both concentration curves hold points and are drawn on the canvas', async () => {
    expect(built, 'needs the model built and run by the step before').toBe(true);
    const datasets = await page.evaluate(() =>
      window.__tidemark.chart.data.datasets.map((d) => ({ label: d.label ?? '', points: d.data.length, colour: String(d.borderColor) })),
    );
    expect(datasets.map((d) => d.label)).toEqual(['central (Plasma)', 'peripheral']);
    for (const d of datasets) expect(d.points, d.label).toBeGreaterThan(0);

    // The canvas starts transparent; after drawing it holds axes, text and two curves. Each curve
    // runs across the plot area, so it covers at least one pixel per column of that area, well
    // over a quarter of the canvas width (a lower bound that survives layout changes; the legend
    // swatch in the same colour is only 24 × 2 px). A grey-level variance over 100 (a standard
    // deviation over 10 of 255 levels) rules out a blank or uniformly filled canvas. The chart draws synchronously; the poll only absorbs a redraw
    // after a late resize, and the checks after it say what is missing.
    const colours = datasets.map((d) => d.colour);
    const drawn = async () => {
      const px = await plotPixels(page, colours);
      return px.nearColour.every((n) => n > px.width / 4) && px.greyVariance > 100;
    };
    await expect.poll(drawn, { timeout: 10_000 }).toBe(true).catch(() => undefined);
    const px = await plotPixels(page, colours);
    datasets.forEach((d, k) => expect(px.nearColour[k], `pixels in the colour of the ${d.label} curve (${d.colour})`).toBeGreaterThan(px.width / 4));
    expect(px.greyVariance, 'grey-level variance of the plot canvas').toBeGreaterThan(100);
    await shotOf('plot', '06-plot.png');
  }, stepTimeout);

  it('shows the same Cmax in the figures as the API gives for the same scenario', async () => {
    expect(built, 'needs the model built and run by the step before').toBe(true);
    const body = await page.evaluate(() => JSON.stringify(window.__tidemark.scenario));
    const res = await fetch(new URL('api/simulate', server!.baseUrl), { method: 'POST', headers: { 'content-type': 'application/json' }, body });
    expect(res.status).toBe(200);
    const api = (await res.json()) as SimulationResultJson;
    const cmax = api.metrics.compartments.central.overall.cmax;
    expect(Number.isFinite(cmax) && cmax > 0).toBe(true);
    // The parameters are chosen so that Cmax (36.52 mg/L) needs all four digits: a page
    // showing fewer would not match by accident.
    expect(fmt(cmax)).not.toBe(fmt(cmax, 3));

    // Same engine, same scenario, same formatter: the displayed text must match exactly
    // at display precision (4 significant digits from fmt).
    const shown = page.getByTestId('cmax-central');
    expect(await shown.textContent()).toBe(fmt(cmax));
    const unit = await shown.evaluate((el) => el.nextElementSibling?.textContent ?? null);
    expect(unit).toBe(api.units.concentration);
    // The page's own result is the API's to the last bit (JSON both ways).
    expect(await page.evaluate(() => window.__tidemark.lastResult?.metrics.compartments.central.overall.cmax)).toBe(cmax);
    await shotOf('figures', '07-figures.png');
  }, stepTimeout);

  it('shows "must be positive" beside a negative volume after a run', async () => {
    expect(built, 'needs the model built and run by the step before').toBe(true);
    const resultBefore = await page.evaluate(() => window.__tidemark.lastResult?.metrics.compartments.central.overall.cmax);
    await typeInto(page, 'compartments[0].volume', '-14');
    expect(await runAndWait(page)).toBe(400);

    const volume = field(page, 'compartments[0].volume');
    await expect.poll(() => volume.getAttribute('aria-invalid')).toBe('true');
    const describedBy = ((await volume.getAttribute('aria-describedby')) ?? '').split(/\s+/).filter(Boolean);
    expect(describedBy.length).toBeGreaterThan(0);
    const messages = await Promise.all(describedBy.map((id) => page.locator(`[id="${id}"]`).textContent()));
    expect(messages.some((m) => m?.includes('must be positive'))).toBe(true);
    // Right beside it: the message is the element just after the input, and it is visible.
    const beside = await volume.evaluate((el) => ({ id: el.nextElementSibling?.id ?? '', text: el.nextElementSibling?.textContent ?? '' }));
    expect(describedBy).toContain(beside.id);
    expect(beside.text).toContain('must be positive');
    expect(await page.locator(`[id="${beside.id}"]`).isVisible()).toBe(true);

    // The summary points at the field; the last good result is kept, marked as out of date.
    const summary = page.getByTestId('error-summary');
    expect(await summary.isVisible()).toBe(true);
    expect(await summary.textContent()).toContain('Compartment 1 (central), volume');
    expect(await page.locator('#stale-note').isVisible()).toBe(true);
    expect(await page.evaluate(() => window.__tidemark.lastResult?.metrics.compartments.central.overall.cmax)).toBe(resultBefore);
    await volume.scrollIntoViewIfNeeded();
    await page.screenshot({ path: artifactPath('08-negative-volume.png') });
  }, stepTimeout);

  it('logged no console error but the expected 400, no uncaught exception and no CSP violation', async () => {
    expect(built, 'needs the model built and run by the steps before').toBe(true);
    expect(record.pageErrors).toEqual([]);
    expect(record.cspMessages).toEqual([]);
    expect(await record.cspViolations()).toEqual([]);
    // The rejected run is the only failed request, and the browser's note about it the only error.
    expect(record.failedResponses.map((r) => ({ status: r.status, path: new URL(r.url).pathname }))).toEqual([{ status: 400, path: '/api/simulate' }]);
    expect(record.consoleErrors).toHaveLength(1);
    expect(record.consoleErrors[0].text).toMatch(/Failed to load resource: the server responded with a status of 400/);
    expect(new URL(record.consoleErrors[0].url).pathname).toBe('/api/simulate');
  }, stepTimeout);
});
