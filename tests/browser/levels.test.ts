// The "Measured levels" panel in Chromium against the real server: the demo levels of the
// invented orvanix (samples/orvanix-fit.json) as a table with clock times; a wrong level placed
// beside its field; NCA with CL/F; a MAP fit whose shown estimates and standard errors are the
// API's own for the same scenario; regimen proposals (samples/orvanix-propose.json) ranked as
// the API ranks them, and one row tried in the compare overlay; a levels CSV imported through
// the file input (samples/levels-orvanix-oral.csv) onto the plot, and a pasted one with a bad row
// refused whole. One page for the whole file; no console errors or CSP violations. Screenshots:
// tests/artifacts/levels-fit.png, levels-propose.png, levels-import.png, levels-import-bad.png.
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import type { Page } from 'playwright-core';
import { describe, expect, it } from 'vitest';
import type { FitResult } from '../../models/fitting/result.ts';
import type { ProposeResult } from '../../models/regimen/propose.ts';
import { artifactPath, repoRoot } from './harness.ts';
import { afterNewResult, field, type PageRecord } from './page-helpers.ts';
import { expectCleanRecord, useBrowserSession } from './session.ts';

const stepTimeout = 60_000;
let page: Page;
let record: PageRecord;
const session = useBrowserSession(120_000, async (s) => {
  ({ page, record } = s);
});

async function viaApi<T>(route: string, scenario: unknown): Promise<T> {
  const res = await fetch(new URL(`api/${route}`, session().server.baseUrl), { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify(scenario) });
  expect(res.status).toBe(200);
  return (await res.json()) as T;
}

const openSample = (id: string) => afterNewResult(page, () => page.getByTestId('sample-select').selectOption(id));

describe('the measured levels panel in Chromium', () => {
  it('opens with the sample\'s levels, their clock times beside elapsed hours', async () => {
    expect(await page.getByTestId('levels-details').evaluate((d) => (d as HTMLDetailsElement).open)).toBe(false);
    await openSample('orvanix-fit');
    expect(await page.getByTestId('levels-details').evaluate((d) => (d as HTMLDetailsElement).open)).toBe(true);
    const rows = page.getByTestId('levels-observations').locator('tbody tr');
    expect(await rows.count()).toBe(6);
    // Written 2026-03-05T07:45 with the clock at 2026-03-04T08:00 (+01:00): 23.75 h later, shown in the clock's zone.
    expect(await rows.nth(2).locator('.levels-when').textContent()).toBe('23.75 h (2026-03-05 07:45 (+01:00))');
    expect(await field(page, 'observations[5].belowLimit').isChecked()).toBe(true);
    await page.evaluate(() => window.scrollTo(0, 0));
    await page.locator('.levels-panel').screenshot({ path: artifactPath('levels-form.png') });
  }, stepTimeout);

  it('places a wrong level beside its field, then shows the NCA table with CL/F', async () => {
    await field(page, 'observations[2].concentration').fill('-5.4 mg/L');
    await page.getByTestId('levels-nca-run').click();
    await expect.poll(() => page.locator('#f-observations-2-concentration-error').textContent()).toMatch(/negative/);
    await field(page, 'observations[2].concentration').fill('5.4 mg/L');
    await page.getByTestId('levels-nca-run').click();
    await page.waitForFunction(() => window.__tidemarkLevels.nca !== null);
    const table = page.getByTestId('levels-nca-table-0');
    // An oral dose: clearance and volume are shown over the unknown bioavailability.
    expect(await table.locator('tbody th').allTextContents()).toEqual(expect.arrayContaining(['CL/F', 'Vz/F', 'Cmax', 'λz']));
    const api = await viaApi<{ profiles: { result: { figures: { cmax: number } } }[] }>('nca', await page.evaluate(() => window.__tidemarkLevels.sent.nca));
    expect(await table.locator('tbody tr', { hasText: /^Cmax/ }).locator('td').first().getAttribute('data-value')).toBe(String(api.profiles[0].result.figures.cmax));
    expect(await page.getByTestId('levels-nca-flags-0').locator('li').count()).toBeGreaterThan(0);
    expect(await page.getByTestId('levels-nca-caution').textContent()).toMatch(/not dosing advice/);
  }, stepTimeout);

  it('fixes the terminal line from a clock time in nca.terminal, shows a wrong time beside its control, and gives the line back to automatic', async () => {
    await page.getByTestId('levels-terminal-from-0').fill('2026-03-05T08:00');
    await page.getByTestId('levels-terminal-fix-0').click();
    await page.waitForFunction(() => window.__tidemarkLevels.nca?.profiles[0].terminalFixed != null);
    expect(await page.evaluate(() => window.__tidemark.scenario.nca)).toEqual({ terminal: [{ subject: 'P-017', compartment: 'central', from: '2026-03-05T08:00' }] });
    // 24 h after the clock origin; the interval's peak is its last level, so none is left after Cmax: flagged beside the control.
    expect(await page.evaluate(() => window.__tidemarkLevels.nca?.profiles[0].terminalFixed)).toEqual({ path: 'nca.terminal[0]', from: 24 });
    expect(await page.getByTestId('levels-terminal-0').locator('.warnings li').textContent()).toMatch(/^nca\.terminal\[0\]\.from \(24 h\) leaves no level/);
    await page.getByTestId('levels-terminal-from-0').fill('soon');
    await page.getByTestId('levels-terminal-fix-0').click();
    await expect.poll(() => page.locator('#levels-terminal-from-0-error').textContent()).toMatch(/^nca\.terminal\[0\]\.from: .*'soon'/);
    await page.getByTestId('levels-terminal-automatic-0').click();
    await page.waitForFunction(() => window.__tidemarkLevels.nca?.profiles[0].terminalFixed === null);
    expect(await page.evaluate(() => window.__tidemark.scenario.nca)).toBeUndefined();
  }, stepTimeout);

  it('writes the quantities to estimate, shows the fit with the API\'s estimates and standard errors, and opens the fitted scenario', async () => {
    const estimate = () => page.evaluate(() => (window.__tidemark.scenario.fit as { estimate: string[] }).estimate);
    expect(await estimate()).toEqual(['CL', 'V', 'ka']);
    await page.getByTestId('levels-estimate-ka').uncheck();
    expect(await estimate()).toEqual(['CL', 'V']);
    await page.getByTestId('levels-estimate-ka').check();
    expect(await estimate()).toEqual(['CL', 'V', 'ka']);
    await page.getByTestId('levels-fit-run').click();
    await page.waitForFunction(() => window.__tidemarkLevels.fit !== null);
    const fit = await viaApi<FitResult>('fit', await page.evaluate(() => window.__tidemarkLevels.sent.fit));
    // The same scenario through the same computation: equal numbers.
    for (const [name, e] of Object.entries(fit.estimates)) {
      expect(Number(await page.getByTestId(`levels-value-${name}`).getAttribute('data-value'))).toBe(e.value);
      expect(Number(await page.getByTestId(`levels-se-${name}`).getAttribute('data-value'))).toBe(e.standardError);
    }
    expect(await page.getByTestId('levels-fit-message').textContent()).toMatch(/^Converged/);
    expect(await page.getByTestId('levels-fit-caution').textContent()).toMatch(/Model outputs for review by a clinician; not dosing advice/);
    expect(await page.getByTestId('levels-correlation').locator('tbody tr').count()).toBe(3);
    // Three plots: the curve with its band, observed against predicted, residuals against time.
    expect(await page.getByTestId('levels-fit').locator('canvas').count()).toBe(3);
    await page.evaluate(() => window.scrollTo(0, 0));
    await page.getByTestId('levels-results').screenshot({ path: artifactPath('levels-fit.png') });
    // The fitted scenario replaces the form (a confirm only if there were unsaved changes) and is run.
    page.once('dialog', (d) => void d.accept());
    await afterNewResult(page, () => page.getByTestId('levels-open-fitted').click());
    expect(await page.evaluate(() => window.__tidemark.scenario)).toEqual(fit.fittedScenario);
    expect(await page.getByTestId('levels-results').isHidden()).toBe(true);
  }, stepTimeout);

  it('ranks proposals as the API does and tries one in compare', async () => {
    await openSample('orvanix-propose');
    expect(await page.getByTestId('levels-results').isHidden()).toBe(true);
    expect(await page.getByTestId('levels-propose-settings').textContent()).toMatch(/250 mg, 500 mg/);
    await page.getByTestId('levels-propose-run').click();
    await page.waitForFunction(() => window.__tidemarkLevels.proposals !== null, undefined, { timeout: stepTimeout });
    const api = await viaApi<ProposeResult>('propose', await page.evaluate(() => window.__tidemarkLevels.sent.propose));
    const rows = page.getByTestId('levels-proposals').locator('tbody tr');
    expect(await rows.count()).toBe(api.proposals.length);
    expect(await rows.locator('th').allTextContents()).toEqual(api.proposals.map((p) => String(p.rank)));
    expect(api.proposals.map((p) => p.rank)).toEqual(api.proposals.map((_, i) => i + 1));
    expect(await page.getByTestId('levels-propose-caution').textContent()).toMatch(/not dosing advice/);
    const pick = api.proposals.findIndex((p) => p.amount !== 500 || p.interval !== 12);
    expect(pick).toBeGreaterThanOrEqual(0);
    const chosen = api.proposals[pick];
    if (pick >= 10) await page.getByTestId('levels-proposals-all').click();
    await page.evaluate(() => window.scrollTo(0, 0));
    await page.getByTestId('levels-results').screenshot({ path: artifactPath('levels-propose.png') });
    await afterNewResult(page, () => page.getByTestId(`levels-try-${pick}`).click());
    const dose = await page.evaluate(() => window.__tidemark.scenario.doses?.[0]);
    expect(dose?.amount).toBe(`${chosen.amount} mg`);
    expect(dose?.every).toBe(`${chosen.interval} h`);
    expect(dose?.duration).toBe(`${chosen.duration} h`);
    expect(await field(page, 'doses[0].amount').inputValue()).toBe(String(chosen.amount));
    expect(await page.locator('#reference-note').textContent()).toMatch(/^Reference:/);
  }, stepTimeout);

  it('fits the proposal table in a 1280 px window, and says in words that rank 1\'s loading dose was lowered to keep the peak ceiling', async () => {
    await page.setViewportSize({ width: 1280, height: 900 });
    try {
      await openSample('orvanix-propose');
      await page.getByTestId('levels-propose-run').click();
      await page.waitForFunction(() => window.__tidemarkLevels.proposals !== null, undefined, { timeout: stepTimeout });
      const table = page.getByTestId('levels-proposals');
      // No sideways scrolling: the table is no wider than its scroll box, and the Try button of rank 1 is inside the window.
      const fit = await table.evaluate((t) => ({ table: t.scrollWidth, box: (t.parentElement as HTMLElement).clientWidth, tryRight: document.querySelector('[data-testid="levels-try-0"]')?.getBoundingClientRect().right ?? Infinity }));
      expect(fit.table).toBeLessThanOrEqual(fit.box);
      expect(fit.tryRight).toBeLessThanOrEqual(1280);
      expect(await page.getByTestId('levels-proposal-notes').textContent()).toMatch(
        /Rank 1: the loading dose is lowered from 1250 mg, the amount aimed at the steady-state trough, to 1000 mg, .*: at 1250 mg, the loading dose's first-interval peak 30\.5 mg\/L is above the 25 mg\/L ceiling \(target 2\)/,
      );
      expect(await page.getByTestId('levels-loading-0').textContent()).toBe('1000lowered');
      await page.getByTestId('levels-results').screenshot({ path: artifactPath('levels-propose-1280.png') });
    } finally {
      await page.setViewportSize({ width: 1366, height: 900 });
    }
  }, stepTimeout);

  it('imports a levels CSV onto the plot, and refuses a pasted one with a bad row by its line and column, importing nothing', async () => {
    // Into the scenario on screen (orvanix-propose, which has no levels of its own).
    expect(await page.evaluate(() => window.__tidemark.scenario.observations)).toBeUndefined();
    const csv = join(repoRoot, 'samples/levels-orvanix-oral.csv');
    // One observation per data line of the file (its header line excepted).
    const rowsInFile = readFileSync(csv, 'utf8').trim().split('\n').length - 1;
    await page.getByTestId('levels-import-replace').check();
    await afterNewResult(page, () => page.getByTestId('levels-import-file').setInputFiles(csv));
    expect(await page.getByTestId('levels-import-status').textContent()).toBe(`Imported ${rowsInFile} observations from levels-orvanix-oral.csv.`);
    expect(await page.getByTestId('levels-observations').locator('tbody tr').count()).toBe(rowsInFile);
    const scenario = await page.evaluate(() => window.__tidemark.scenario.observations as unknown[]);
    expect(scenario).toHaveLength(rowsInFile);
    expect(scenario[1]).toEqual({ subject: 'OR-01', time: '0.5 h', concentration: '4.128 mg/L', source: 'levels-orvanix-oral.csv line 3' });
    // Every level is drawn over the curve (a linear axis: the levels of 0 at time 0 too).
    const drawn = () => page.evaluate(() => (window.__tidemark.chart?.data.datasets ?? []).filter((d) => (d as unknown as Record<string, unknown>).tmObservations === true).reduce((n, d) => n + d.data.length, 0));
    expect(await drawn()).toBe(rowsInFile);
    await page.getByTestId('levels-import').screenshot({ path: artifactPath('levels-import.png') });

    await page.getByTestId('levels-import').locator('summary', { hasText: 'paste' }).click();
    await page.getByTestId('levels-import-text').fill('time [h],concentration [mg/L]\n1,2.5\n\n2,-0.4\n3,1.1,x\n');
    await page.getByTestId('levels-import-paste').click();
    expect(await page.getByTestId('levels-import-status').textContent()).toMatch(/^Nothing imported from pasted text: 2 problems/);
    expect(await page.getByTestId('levels-import-errors').locator('li').allTextContents()).toEqual(['line 4, column concentration: -0.4 is negative; a measured level is 0 or more', 'line 5: 3 fields where the header has 2']);
    expect(await page.evaluate(() => window.__tidemark.scenario.observations)).toEqual(scenario);
    expect(await page.getByTestId('levels-observations').locator('tbody tr').count()).toBe(rowsInFile);
    await page.getByTestId('levels-import').screenshot({ path: artifactPath('levels-import-bad.png') });
  }, stepTimeout);

  it('made no console errors, page errors or CSP violations', async () => {
    // The two 400s are sent on purpose: the negative level, and the terminal line from 'soon'.
    await expectCleanRecord(record, 2);
  });
});
