// What a first-time user tripped over on the page (issue 10), in Debian's Chromium against
// the real server: a report that printed the edited form instead of the run on screen, the
// compare table's cycle counts, the log axis, the staircase on rising limbs, fluctuation's
// unit, "doses[1]" in the steady-state words, printing, compare mode at 1440 px, the output
// step's unit and point count, kinetics switches and removals that lost what was typed, and
// the names of new compartments. Each test opens its own page, which loads and runs the
// default sample (the fictional brennock, samples/brennock-oral-bid.json) by itself.
import { execFileSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { Browser, BrowserContext, Page } from 'playwright-core';
import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import type { SimulationResultJson } from '../../models/result/result-format.ts';
import { fmt } from '../../models/result/summary-text.ts';
import { artifactPath, ensureClientBuilt, launchChromium, startServer, type RunningServer } from './harness.ts';
import { captureDownload, field, openApp, runAndWait, typeInto, unitOf, type PageRecord } from './page-helpers.ts';

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
  tempDir = mkdtempSync(join(tmpdir(), 'tidemark-first-use-'));
  // The pool's workers load the engine when they start; one run here waits for that.
  const sample = await fetch(new URL('api/samples/brennock-oral-bid', server.baseUrl)).then((r) => r.json());
  const warm = await fetch(new URL('api/simulate', server.baseUrl), { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify(sample) });
  if (warm.status !== 200) throw new Error(`the server did not simulate the sample (${warm.status})`);
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

async function freshPage(viewport?: { width: number; height: number }): Promise<{ page: Page; record: PageRecord }> {
  const opened = await openApp(context, server!.baseUrl, viewport);
  openPages.push(opened.page);
  return opened;
}

function noPageErrors(record: PageRecord): void {
  expect(record.pageErrors, 'uncaught exceptions in the page').toEqual([]);
  expect(record.consoleErrors.map((e) => e.text), 'console errors').toEqual([]);
}

const resultOf = (page: Page) => page.evaluate(() => window.__tidemark.lastResult as SimulationResultJson);
const scenarioOf = (page: Page) => page.evaluate(() => JSON.parse(JSON.stringify(window.__tidemark.scenario)) as Record<string, unknown>);

function pdfText(bytes: Buffer, name: string): string {
  const path = join(tempDir, name);
  writeFileSync(path, bytes);
  return execFileSync('pdftotext', ['-enc', 'UTF-8', path, '-'], { encoding: 'utf8' }).replace(/\s+/g, ' ');
}

/** Counts the page's POSTs to /api/simulate from now on. */
function countRuns(page: Page): () => number {
  let n = 0;
  page.on('request', (r) => {
    if (r.url().endsWith('/api/simulate') && r.method() === 'POST') n++;
  });
  return () => n;
}

describe('first use of the page', () => {
  it('item 2: a report asked for after an unrun edit runs the form first, so the PDF and the screen show the same run', async () => {
    const { page, record } = await freshPage();
    await typeInto(page, 'doses[0].amount', '250');
    await runAndWait(page);
    const at250 = await resultOf(page);
    const cmax250 = at250.metrics.compartments.central.overall.cmax;
    await typeInto(page, 'doses[0].amount', '400');
    await expect.poll(() => page.locator('#stale-note').isVisible()).toBe(true);
    const runs = countRuns(page);
    const pdf = await captureDownload(page, () => page.getByTestId('download-report').click());
    const text = pdfText(pdf.bytes, 'rerun.pdf');
    const shown = await resultOf(page);
    const cmaxShown = shown.metrics.compartments.central.overall.cmax;
    // The form was run (one simulation) and the screen now shows the 400 mg run …
    expect(runs()).toBe(1);
    expect(cmaxShown).toBeGreaterThan(1.5 * cmax250);
    expect(await page.getByTestId('cmax-central').textContent()).toBe(fmt(cmaxShown));
    expect(await page.locator('#stale-note').isVisible()).toBe(false);
    // … and the PDF is of that run: its dose and its Cmax, not the 250 mg run's.
    expect(text).toContain('400 mg into gut');
    expect(text).toContain(fmt(cmaxShown));
    expect(text).not.toContain(fmt(cmax250));
    // The fingerprint shown with the run is the one the report prints.
    const fingerprint = await page.getByTestId('run-fingerprint').textContent();
    expect(fingerprint).toMatch(/^[0-9a-f]{12}$/);
    expect(text).toContain(`fingerprint ${fingerprint}`);
    // The page says that it ran the form first.
    await expect.poll(() => page.locator('#notice').textContent()).toMatch(/form had changed since the last run, so it was run first/);
    expect(await page.locator('#run-status').textContent()).toMatch(/form had changed since the previous run/);

    // With nothing changed, the report is of the run on screen and nothing is run again.
    const again = await captureDownload(page, () => page.getByTestId('download-report').click());
    expect(runs()).toBe(1);
    expect(pdfText(again.bytes, 'same.pdf')).toContain(fmt(cmaxShown));
    noPageErrors(record);
  }, stepTimeout);

  it("items 5, 9, 11: compare shows each side's own cycles to steady state, fluctuation in %, and the dose line in words", async () => {
    const { page, record } = await freshPage({ width: 1440, height: 900 });
    await page.getByTestId('keep-reference').click();
    const reference = await resultOf(page);
    // Every 4 h instead of 12: more cycles to reach 90% of steady state.
    await typeInto(page, 'doses[0].every', '4');
    await runAndWait(page);
    const current = await resultOf(page);
    const ssRef = reference.metrics.steadyState!.compartments.find((c) => c.compartment === 'central')!;
    const ssCur = current.metrics.steadyState!.compartments.find((c) => c.compartment === 'central')!;
    expect(ssCur.cyclesTo90).not.toBe(ssRef.cyclesTo90);
    const cycles = (n: number | null) => `(${n} cycle${n === 1 ? '' : 's'})`;
    const refCell = page.getByTestId('ref-ss-t90-central').locator('xpath=..');
    const curCell = page.getByTestId('ss-t90-central').locator('xpath=..');
    expect(await refCell.textContent()).toContain(cycles(ssRef.cyclesTo90));
    expect(await curCell.textContent()).toContain(cycles(ssCur.cyclesTo90));
    expect(await refCell.textContent()).not.toContain(cycles(ssCur.cyclesTo90));
    // The row's name carries no count of either side.
    const rowName = await page.locator('table.steady-table tbody tr').filter({ has: page.getByTestId('ss-t90-central') }).locator('th').textContent();
    expect(rowName).toBe('Time to 90% of steady state');

    // Fluctuation: the label states percent, the value is 100 × the engine's fraction.
    const flucRow = page.locator('table.steady-table tbody tr').filter({ has: page.getByTestId('ss-fluctuation-central') });
    expect(await flucRow.locator('th').textContent()).toMatch(/Fluctuation .*%/);
    expect(await page.getByTestId('ss-fluctuation-central').textContent()).toBe(fmt(100 * (ssCur.fluctuation as number)));

    // The steady-state words name the dose line, never its JSON path.
    const message = await page.getByTestId('steady-message').textContent();
    expect(message).toContain('dose line 1 — maintenance');
    expect(await page.getByTestId('figures').textContent()).not.toContain('doses[');

    // Item 14: at 1440 px the compare interval table fits its column: no horizontal scroll.
    await page.locator('.intervals-box').first().evaluate((d) => ((d as HTMLDetailsElement).open = true));
    const fit = await page.locator('.intervals-box .table-scroll').first().evaluate((el) => ({ scroll: el.scrollWidth, client: el.clientWidth }));
    expect(fit.scroll).toBeLessThanOrEqual(fit.client);
    await page.locator('.figures-panel').screenshot({ path: artifactPath('first-use-compare-1440.png') });
    noPageErrors(record);
  }, stepTimeout);

  it('items 7 and 8: the log axis runs over whole decades from the data, labelled 1, 10, 100; the line never takes the per-pixel staircase path', async () => {
    const { page, record } = await freshPage();
    await page.locator('#y-log').check();
    await page.waitForTimeout(100);
    const axis = await page.evaluate(() => {
      const y = window.__tidemark.chart.scales.y;
      return { min: y.min, max: y.max, labels: y.ticks.map((t) => String(t.label ?? '')).filter((l) => l !== '') };
    });
    // The sample's central curve runs 1.1–9.2 mg/L after the first rise and the window's top
    // is 12 mg/L: the decades 1–100, as the report's rule (server/report/ticks.ts) gives.
    expect(axis.min).toBe(1);
    expect(axis.max).toBe(100);
    expect(axis.labels).toEqual(['1', '10', '100']);
    await page.locator('.plot-panel').screenshot({ path: artifactPath('first-use-log.png') });

    // chart.js's fast path (tension 0, no dash) puts each pixel column's points on one
    // vertical bar: that is what drew steps on rising limbs. The line must not take it.
    const line = await page.evaluate(() => {
      const meta = window.__tidemark.chart.getDatasetMeta(0);
      const el = meta.dataset as unknown as { options: { tension: number; borderDash?: number[] } };
      return { tension: el.options.tension, dash: el.options.borderDash?.length ?? 0 };
    });
    expect(line.tension > 0 || line.dash > 0).toBe(true);

    // Zoomed to one interval, points are added between the 15-min reported times.
    await page.locator('#y-linear').check();
    await page.locator('#zoom-next').click();
    const zoomed = await page.evaluate(() => {
      const c = window.__tidemark.chart;
      const data = c.data.datasets[0].data as { x: number; between?: boolean }[];
      const lo = c.scales.x.min;
      const hi = c.scales.x.max;
      const inside = data.filter((p) => p.x >= lo && p.x <= hi);
      return { reported: inside.filter((p) => !p.between).length, added: inside.filter((p) => p.between).length };
    });
    expect(zoomed.reported).toBeGreaterThan(40);
    expect(zoomed.added).toBeGreaterThan(zoomed.reported);
    // Hovering between two reported times shows the nearer reported one, never an added point.
    const at = await page.evaluate(() => {
      const c = window.__tidemark.chart;
      return { x: c.scales.x.getPixelForValue(1.1), y: c.scales.y.getPixelForValue(4) };
    });
    const box = (await page.getByTestId('plot').boundingBox())!;
    await page.mouse.move(box.x + at.x, box.y + at.y);
    await expect.poll(() => page.evaluate(() => window.__tidemark.chart.tooltip?.dataPoints?.length ?? 0)).toBeGreaterThan(0);
    const hovered = await page.evaluate(() => window.__tidemark.chart.tooltip!.dataPoints.map((d) => d.raw as { x: number; between?: boolean }));
    expect(hovered.map((p) => p.x)).toEqual([1]);
    expect(hovered[0].between).toBeUndefined();
    noPageErrors(record);
  }, stepTimeout);

  it('items 3 and 4: the steady-state zoom draws the steady-state cycle itself, and a course that ends before it says so', async () => {
    const { page, record } = await freshPage();
    // Clearance 0.42 L/h in 42 L: k = 0.01 /h, 90% of steady state after about 230 h; the week ends first.
    await typeInto(page, 'transfers[1].cl', '0.42');
    expect(await runAndWait(page)).toBe(200);
    await expect.poll(() => page.locator('#figures').innerText()).toMatch(/is not at steady state by the end of the span/);
    await page.locator('#zoom-steady').click();
    const shown = await page.evaluate(() => {
      const c = window.__tidemark.chart;
      const r = window.__tidemark.lastResult!;
      const lo = c.scales.x.min;
      const hi = c.scales.x.max;
      const peakIn = (label: RegExp) =>
        Math.max(...c.data.datasets.filter((d) => label.test(String(d.label))).flatMap((d) => (d.data as { x: number; y: number }[]).filter((p) => p.x >= lo && p.x <= hi).map((p) => p.y)));
      return {
        simulated: peakIn(/^central \(/),
        steady: peakIn(/steady-state cycle/),
        cmaxSs: r.metrics.steadyState!.compartments.find((x) => x.compartment === 'central')!.cmax,
        yMax: c.scales.y.max,
      };
    });
    // The dashed curve is the steady state's own cycle: its peak is the steady-state Cmax of the
    // figures (to the plot's interpolation), well above the last simulated interval's.
    expect(Math.abs(shown.steady / shown.cmaxSs - 1)).toBeLessThan(1e-3);
    // After 168 h at k = 0.01 /h the course is at 1 − e^{−1.68} ≈ 81% of steady state.
    expect(shown.steady).toBeGreaterThan(1.15 * shown.simulated);
    expect(shown.yMax).toBeGreaterThanOrEqual(shown.steady);
    await expect.poll(() => page.locator('#zoom-note').innerText()).toMatch(/with the steady-state cycle \(dashed\): the regimen continued, computed, not simulated up to/);
    await page.locator('.plot-panel').screenshot({ path: artifactPath('first-use-steady-state.png') });
    noPageErrors(record);
  }, stepTimeout);

  it('items 1 and 6: a unit typo is quoted as typed, once, at the volume alone', async () => {
    const { page, record } = await freshPage();
    await typeInto(page, 'compartments[1].volume', '12 LL');
    expect(await runAndWait(page)).toBe(400);
    const volume = field(page, 'compartments[1].volume');
    await expect.poll(() => volume.getAttribute('aria-invalid')).toBe('true');
    const ids = ((await volume.getAttribute('aria-describedby')) ?? '').split(/\s+/).filter(Boolean);
    const messages = (await Promise.all(ids.map((id) => page.locator(`[id="${id}"]`).textContent()))).join(' ');
    // Before: "could not read '12 LL L'…", and the target window blamed as well.
    expect(messages).toContain("could not read the unit 'LL' in '12 LL'");
    expect(messages).not.toContain('LL L');
    expect(await field(page, 'output.thresholds[0].compartment').getAttribute('aria-invalid')).not.toBe('true');
    expect(record.pageErrors).toEqual([]);
    // The browser logs the 400 answer itself as a failed resource; nothing else may be logged.
    expect(record.consoleErrors.map((e) => e.text).filter((t) => !/status of 400/.test(t))).toEqual([]);
  }, stepTimeout);

  it('item 13: printing gives the caution, a summary of the scenario, the plot and the figures — no form, no buttons', async () => {
    const { page, record } = await freshPage();
    await page.emulateMedia({ media: 'print' });
    const visible = await page.evaluate(() => {
      const shown = (el: Element | null) => el !== null && (el as HTMLElement).offsetParent !== null;
      return {
        form: shown(document.getElementById('scenario-form')),
        buttons: Array.from(document.querySelectorAll('button')).filter((b) => shown(b)).map((b) => b.textContent),
        caution: shown(document.querySelector('.caution')),
        summary: shown(document.getElementById('print-summary')),
        plot: shown(document.getElementById('plot')),
        figures: shown(document.getElementById('figures')),
      };
    });
    expect(visible).toEqual({ form: false, buttons: [], caution: true, summary: true, plot: true, figures: true });
    const pdf = await page.pdf({ format: 'A4', printBackground: true });
    const path = artifactPath('first-use-print.pdf');
    writeFileSync(path, pdf);
    const text = execFileSync('pdftotext', ['-enc', 'UTF-8', path, '-'], { encoding: 'utf8' }).replace(/\s+/g, ' ');
    expect(text).toContain('not dosing advice');
    expect(text).toContain('Brennock 400 mg by mouth twice daily');
    expect(text).toContain('Dose line 1 — maintenance: 400 mg into gut');
    expect(text).toContain('Concentration over time');
    expect(text).toContain('Compartment central');
    expect(text).not.toContain('Run simulation');
    expect(text).not.toContain('Add compartment');
    const pages = Number(/Pages:\s+(\d+)/.exec(execFileSync('pdfinfo', [path], { encoding: 'utf8' }))?.[1]);
    expect(pages).toBeLessThanOrEqual(3);
    // The plot is printed whole: its canvas is no wider than the printed page's content.
    await page.setViewportSize({ width: 718, height: 1000 });
    const fits = await page.evaluate(() => {
      const canvas = document.getElementById('plot')!.getBoundingClientRect();
      return canvas.right <= document.documentElement.clientWidth + 1 && canvas.width > 500;
    });
    expect(fits).toBe(true);
    noPageErrors(record);
  }, stepTimeout);

  it('items 15 and 20: a new model keeps hours for every time, names compartments in words, and warns before a 20,000-point run', async () => {
    const { page, record } = await freshPage();
    await page.getByTestId('new-model').click();
    expect(await unitOf(page, 'output.step').inputValue()).toBe('h');
    expect(await field(page, 'output.step').inputValue()).toBe('0.25');
    await page.getByTestId('add-compartment').click();
    await page.getByTestId('add-compartment').click();
    await page.getByTestId('add-compartment').click();
    const ids = ((await scenarioOf(page)).compartments as { id: string }[]).map((c) => c.id);
    expect(ids).toEqual(['central', 'peripheral1', 'peripheral2']);
    await page.getByTestId('add-transfer').click();

    // 10 days at a step of 0.1 typed in minutes: 144,001 reported times.
    await typeInto(page, 'output.end', '240');
    await unitOf(page, 'output.step').selectOption('min');
    await typeInto(page, 'output.step', '0.1');
    await expect.poll(() => page.getByTestId('points-warning').textContent()).toContain('144,001 reported times');
    const runs = countRuns(page);
    await page.getByTestId('run').click();
    await expect.poll(() => page.locator('#run-status').textContent()).toMatch(/^Not run: This step gives 144,001 reported times/);
    expect(runs()).toBe(0);
    await expect.poll(() => page.getByTestId('run-anyway').isVisible()).toBe(true);
    // In hours the warning goes.
    await unitOf(page, 'output.step').selectOption('h');
    await typeInto(page, 'output.step', '0.1');
    await expect.poll(() => page.getByTestId('points-warning').isVisible()).toBe(false);
    noPageErrors(record);
  }, stepTimeout);

  it('item 16: switching kinetics keeps or converts what was typed; removing a compartment names its transfers and Undo puts them back', async () => {
    const { page, record } = await freshPage();
    const before = await scenarioOf(page);
    // transfers[1] is central → out, CL 4.2 L/h; central's volume is 42 L.
    await page.locator('[data-focus-key="transfer-kind-1"]').selectOption('k');
    expect(((await scenarioOf(page)).transfers as Record<string, unknown>[])[1].k).toBe('0.1 1/h');
    expect(await page.getByTestId('kinetics-note-1').textContent()).toContain('= k 0.1 1/h');
    await page.locator('[data-focus-key="transfer-kind-1"]').selectOption('mm');
    let t1 = ((await scenarioOf(page)).transfers as Record<string, unknown>[])[1];
    expect(t1.k).toBeUndefined();
    expect(await page.getByTestId('kinetics-note-1').textContent()).toMatch(/k 0\.1 1\/h kept aside/);
    await typeInto(page, 'transfers[1].vmax', '20');
    await typeInto(page, 'transfers[1].km', '4');
    await page.locator('[data-focus-key="transfer-kind-1"]').selectOption('cl');
    t1 = ((await scenarioOf(page)).transfers as Record<string, unknown>[])[1];
    expect(t1.cl).toBe('4.2 L/h');
    expect(t1.vmax).toBeUndefined();
    await page.locator('[data-focus-key="transfer-kind-1"]').selectOption('mm');
    t1 = ((await scenarioOf(page)).transfers as Record<string, unknown>[])[1];
    expect([t1.vmax, t1.km]).toEqual(['20 mg/h', '4 mg/L']);
    await page.locator('[data-focus-key="transfer-kind-1"]').selectOption('cl');
    expect(await scenarioOf(page)).toEqual(before);

    // Remove central: both of its transfers go, and are named.
    await page.getByRole('button', { name: 'Remove compartment central' }).click();
    const bar = page.getByTestId('undo-bar-model');
    await expect.poll(() => bar.textContent()).toContain('Removed compartment central and its 2 transfers: gut → central (absorption); central → out (renal and hepatic clearance).');
    expect(((await scenarioOf(page)).transfers as unknown[]).length).toBe(0);
    await page.getByTestId('undo-model').click();
    expect(await scenarioOf(page)).toEqual(before);
    expect(await page.getByTestId('undo-bar-model').count()).toBe(0);
    // Undo is for the last removal only: any other change withdraws it.
    await page.getByRole('button', { name: 'Remove transfer 1' }).click();
    expect(await page.getByTestId('undo-bar-model').textContent()).toContain('Removed transfer 1: gut → central (absorption).');
    await typeInto(page, 'title', 'Changed');
    expect(await page.getByTestId('undo-bar-model').count()).toBe(0);

    // A dose line and a target window come back the same way.
    const now = await scenarioOf(page);
    await page.getByRole('button', { name: 'Remove dose line 1' }).click();
    expect(await page.getByTestId('undo-bar-regimen').textContent()).toContain('Removed dose line 1 — maintenance (400 mg into gut).');
    await page.getByTestId('undo-regimen').click();
    expect(await scenarioOf(page)).toEqual(now);
    await page.getByRole('button', { name: 'Remove target window 1' }).click();
    expect(await page.getByTestId('undo-bar-output').textContent()).toContain('Removed target window 1 (central from 4 mg/L to 12 mg/L).');
    await page.getByTestId('undo-output').click();
    expect(await scenarioOf(page)).toEqual(now);
    noPageErrors(record);
  }, stepTimeout);
});
