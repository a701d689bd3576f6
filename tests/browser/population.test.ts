// The population panel in a real browser (Debian's Chromium through playwright-core) against
// the real server and its population threads: the demo population opened from the sample
// list, run with 60 subjects, its median band drawn equal to what the API answers for the
// same scenario; a large run cancelled; covariates taken from a pasted CSV table (a bad cell
// named by line and column, nothing applied until every line reads); an emptied cell refused
// beside it before anything is sent; no console errors and no CSP violations on the way.
// Screenshots go to tests/artifacts/population.png and population-table.png (git-ignored).
import { mkdirSync } from 'node:fs';
import { join } from 'node:path';
import type { Page } from 'playwright-core';
import { describe, expect, it } from 'vitest';
import { repoRoot } from './harness.ts';
import { afterNewResult, field, type PageRecord } from './page-helpers.ts';
import { expectCleanRecord, useBrowserSession } from './session.ts';

const stepTimeout = 180_000;
const sampleId = 'halvorin-population-infusion';

let page: Page;
let record: PageRecord;

const session = useBrowserSession(stepTimeout, async (s) => {
  ({ page, record } = s);
});

/** Runs a population through the API from here (not the page), until it ends. */
async function apiPopulation(scenario: unknown): Promise<{ state: string; result?: { bands: Record<string, Record<string, (number | null)[]>>; times: number[] } }> {
  const post = await fetch(new URL('api/population', session().server.baseUrl), { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ scenario }) });
  expect(post.status).toBe(202);
  const { id } = (await post.json()) as { id: string };
  for (;;) {
    const state = (await (await fetch(new URL(`api/population/${id}`, session().server.baseUrl))).json()) as { state: string };
    if (state.state !== 'running') return state;
    await new Promise((r) => setTimeout(r, 100));
  }
}

describe('the population panel in Chromium', () => {
  it('lists the demo population among the samples and opens it with the panel unfolded', async () => {
    const options = await page.getByTestId('sample-select').locator('option').evaluateAll((els) => els.map((e) => (e as HTMLOptionElement).value));
    expect(options).toContain(sampleId);
    await afterNewResult(page, () => page.getByTestId('sample-select').selectOption(sampleId));
    expect(await page.getByTestId('population-details').evaluate((d) => (d as HTMLDetailsElement).open)).toBe(true);
    // The typical subject's run is the page's usual one, unchanged by the population.
    expect(await page.evaluate(() => window.__tidemark.lastResult?.times.length)).toBeGreaterThan(0);
    // The clearance varies between subjects: its toggle is on and shows the cv written in the sample.
    expect(await page.getByTestId('varies-transfers[0].cl').isChecked()).toBe(true);
    expect(await field(page, 'transfers[0].cl.cv').inputValue()).toBe('30%');
    expect(await page.getByTestId('varies-transfers[1].cl').isChecked()).toBe(false);
  }, stepTimeout);

  it('writes { typical, cv } when a quantity is made to vary, and the plain value back when it no longer does', async () => {
    const volume = () => page.evaluate(() => window.__tidemark.scenario.compartments?.[1].volume);
    expect(await volume()).toBe('24 L');
    await page.getByTestId('varies-compartments[1].volume').check();
    expect(await volume()).toEqual({ typical: '24 L', cv: '30%' });
    await field(page, 'compartments[1].volume.cv').fill('15');
    await field(page, 'compartments[1].volume.name').fill('V2');
    expect(await volume()).toEqual({ typical: '24 L', cv: '15%', name: 'V2' });
    await page.getByTestId('varies-compartments[1].volume').uncheck();
    expect(await volume()).toBe('24 L');
    expect(await field(page, 'compartments[1].volume.cv').count()).toBe(0);
  }, stepTimeout);

  it('runs 60 subjects and draws the median band equal to the API answer for the same scenario', async () => {
    const subjects = field(page, 'population.subjects');
    await subjects.fill('60');
    expect(await page.evaluate(() => (window.__tidemark.scenario.population as { subjects: number }).subjects)).toBe(60);
    await page.getByTestId('run-population').click();
    await page.waitForFunction(() => window.__tidemarkPopulation.result !== null && (window.__tidemarkPopulation.chart?.data.datasets.length ?? 0) === 5, undefined, { timeout: stepTimeout });
    const shown = await page.evaluate(() => {
      const chart = window.__tidemarkPopulation.chart!;
      return {
        sent: window.__tidemarkPopulation.sent,
        median: chart.data.datasets[2].data as { x: number; y: number }[],
        labels: chart.data.datasets.map((d) => d.label),
        fills: chart.data.datasets.map((d) => (d as { fill?: unknown }).fill),
        result: window.__tidemarkPopulation.result,
      };
    });
    // The sample has a residual error: the simulated observations' outer percentiles follow, unfilled.
    expect(shown.labels).toEqual(['5th percentile', '5th to 95th percentile', 'median', '5th percentile of simulated observations', 'simulated observations (with residual error)']);
    // The shaded area lies between the outer percentiles (chart.js fill to the dataset before).
    expect(shown.fills).toEqual([false, '-1', false, false, false]);
    expect((shown.sent as { population: { subjects: number } }).population.subjects).toBe(60);
    const api = await apiPopulation(shown.sent);
    expect(api.state).toBe('done');
    // Same scenario, same seed: the API's answer is the same computation, so equal values.
    const median = api.result!.bands.central['50'];
    expect(shown.median.map((p) => p.y)).toEqual(median.filter((v): v is number => v !== null));
    expect(shown.median.map((p) => p.x)).toEqual(api.result!.times.filter((_, i) => median[i] !== null));
    expect(shown.result).toEqual(api.result);
    await expect.poll(() => page.getByTestId('population-caution').textContent()).toMatch(/not dosing advice/);
    expect(await page.getByTestId('population-attainment').locator('li').count()).toBe(3);
    expect(await page.getByTestId('population-attainment').textContent()).toMatch(/± [\d.]+% \(standard error\)/);
    expect(await page.getByTestId('population-histogram-trough').count()).toBe(1);
    expect(await page.getByTestId('population-histogram-cmax').count()).toBe(1);
    expect(await page.getByTestId('population-regimens').locator('tbody tr').count()).toBe(8);
    expect(await page.getByTestId('population-best-regimen').textContent()).toMatch(/★ best/);
    mkdirSync(join(repoRoot, 'tests/artifacts'), { recursive: true });
    // At the top, so the page's sticky caution is drawn where it stands, not over the results.
    await page.evaluate(() => window.scrollTo(0, 0));
    await page.screenshot({ path: join(repoRoot, 'tests/artifacts/population.png'), fullPage: true });
  }, stepTimeout);

  it('cancels a large run, keeps the shown result, and frees the server for the next run', async () => {
    const before = await page.evaluate(() => window.__tidemarkPopulation.result);
    await field(page, 'population.subjects').fill('5000');
    await page.getByTestId('run-population').click();
    await page.getByTestId('population-progress').waitFor({ state: 'visible' });
    const cancel = page.getByTestId('population-cancel');
    await cancel.waitFor({ state: 'visible', timeout: stepTimeout });
    await cancel.click();
    await expect.poll(() => page.getByTestId('population-status').textContent()).toBe('Cancelled.');
    expect(await page.getByTestId('population-progress').isVisible()).toBe(false);
    expect(await page.evaluate(() => window.__tidemarkPopulation.result)).toEqual(before);
    // The threads were stopped: the server takes a new population at once.
    const small = (await page.evaluate(() => window.__tidemarkPopulation.sent)) as { population: { subjects: number } };
    small.population.subjects = 5;
    expect((await apiPopulation(small)).state).toBe('done');
  }, stepTimeout);

  it('shows a population problem beside its field and keeps what was typed', async () => {
    await field(page, 'population.subjects').fill('60');
    await field(page, 'transfers[0].cl.cv').fill('-10%');
    await page.getByTestId('run-population').click();
    await expect.poll(() => page.locator('#f-transfers-0-cl-cv-error').textContent()).toMatch(/must not be negative/);
    expect(await field(page, 'transfers[0].cl.cv').inputValue()).toBe('-10%');
    expect(await page.getByTestId('population-status').textContent()).toMatch(/problems/);
  }, stepTimeout);

  it('takes the covariates from a pasted 3-row CSV: a bad cell is named by line and column and nothing applied; the run uses the rows; switching back restores the distributions', async () => {
    const population = () => page.evaluate(() => window.__tidemark.scenario.population as Record<string, unknown>);
    await field(page, 'transfers[0].cl.cv').fill('30%');
    const distributions = (await population()).covariates;
    await page.getByTestId('population-covariate-table').locator('summary').click();
    await page.getByTestId('covariate-csv-paste').click();
    const header = 'weight [kg],height [cm],age [year],sex,serumCreatinine [mg/dL]\n';
    await page.getByTestId('covariate-csv-text').fill(`${header}58,162,34,female,0.7\n6o,168,47,female,0.8\n83,171,55,male,1.1\n`);
    await page.getByTestId('covariate-csv-apply').click();
    // The command line's message for the same file (models/population/covariate-csv.ts), without a file name.
    expect(await page.getByTestId('covariate-csv-problems').locator('.csv-problem').allTextContents()).toEqual(["line 3, column weight: '6o' is not a number (the column is in kg)"]);
    expect((await population()).covariateTable).toBeUndefined();
    expect((await population()).covariates).toEqual(distributions);

    await page.getByTestId('covariate-csv-text').fill(`${header}58,162,34,female,0.7\n64,168,47,female,0.8\n83,171,55,male,1.1\n`);
    await page.getByTestId('covariate-csv-apply').click();
    const rows = [
      { weight: '58 kg', height: '162 cm', age: '34 year', sex: 'female', serumCreatinine: '0.7 mg/dL' },
      { weight: '64 kg', height: '168 cm', age: '47 year', sex: 'female', serumCreatinine: '0.8 mg/dL' },
      { weight: '83 kg', height: '171 cm', age: '55 year', sex: 'male', serumCreatinine: '1.1 mg/dL' },
    ];
    expect((await population()).covariateTable).toEqual({ rows });
    expect('covariates' in (await population())).toBe(false);
    expect(await page.getByTestId('covariate-source-table').isChecked()).toBe(true);
    expect(await field(page, 'population.covariateTable.rows[2].weight').inputValue()).toBe('83');
    expect(await page.getByTestId('aside-distributions').textContent()).toMatch(/5 covariate distribution/);
    // In mid-view, clear of the page's sticky caution.
    await page.getByTestId('population-covariate-table').evaluate((el) => el.scrollIntoView({ block: 'center' }));
    await page.getByTestId('population-covariate-table').screenshot({ path: join(repoRoot, 'tests/artifacts/population-table.png') });

    // The last run was refused (the previous step), so "Done" is this run's.
    expect(await page.getByTestId('population-status').textContent()).toMatch(/^Not run/);
    await page.getByTestId('run-population').click();
    await page.waitForFunction(() => /^Done/.test(document.querySelector('[data-testid="population-status"]')?.textContent ?? ''), undefined, { timeout: stepTimeout });
    const run = await page.evaluate(() => ({ result: window.__tidemarkPopulation.result!, sent: window.__tidemarkPopulation.sent as { population: Record<string, unknown> } }));
    expect(run.result.subjects).toBe(60);
    expect(run.result.settings.covariates).toEqual(['a table of 3 covariate rows, taken in turn']);
    expect(run.sent.population.covariateTable).toEqual({ rows });

    // The explicit switch keeps what each choice held.
    await page.getByTestId('covariate-source-distributions').check();
    expect((await population()).covariates).toEqual(distributions);
    expect('covariateTable' in (await population())).toBe(false);
    await page.getByTestId('covariate-source-table').check();
    expect((await population()).covariateTable).toEqual({ rows });
  }, stepTimeout);

  it('refuses an emptied covariate cell beside it, before sending anything', async () => {
    const path = 'population.covariateTable.rows[1].weight';
    const before = await page.evaluate(() => window.__tidemarkPopulation.sent);
    await field(page, path).fill('');
    await page.getByTestId('run-population').click();
    // The page's own check (client/src/covariate-table-model.ts); the record below still holds only the one 400 sent on purpose.
    await expect.poll(() => page.locator(`[data-path="${path}"] + .field-error`).textContent()).toBe('row 2, weight: empty; every subject needs a value');
    expect(await page.getByTestId('population-status').textContent()).toMatch(/^Not run/);
    expect(await page.evaluate(() => window.__tidemarkPopulation.sent)).toEqual(before);
    await field(page, path).fill('64');
    expect(await page.evaluate(() => (window.__tidemark.scenario.population as { covariateTable: { rows: { weight: string }[] } }).covariateTable.rows[1].weight)).toBe('64 kg');
  }, stepTimeout);

  it('made no console errors, page errors or CSP violations', async () => {
    // The one 400 is the invalid population the previous step sent on purpose.
    await expectCleanRecord(record, 1);
  });
});
