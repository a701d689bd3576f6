// The population panel's folded extras in a real browser (Debian's Chromium through
// playwright-core) against the real server: the demo population opened, its correlation,
// residual error and regimen grid removed through the form (each field goes with its last
// entry), then a correlation, a residual error and a 2×2 regimen grid typed back in; the
// scenario in the store holds exactly what was typed; 40 subjects run; the dashed band of
// simulated observations is drawn equal to result.observationBands; the regimen table has 4
// rows with the best one marked; a correlation that breaks positive definiteness is named
// beside its value field. Also: a dose's bioavailability and lag get the "varies between
// subjects" toggle and the "depends on the subject" control. No console errors and no CSP
// violations. The screenshot goes to tests/artifacts/population-extras.png (git-ignored).
import { mkdirSync } from 'node:fs';
import { join } from 'node:path';
import type { Page } from 'playwright-core';
import { describe, expect, it } from 'vitest';
import { repoRoot } from './harness.ts';
import { afterNewResult, choose, field, typeInto, type PageRecord } from './page-helpers.ts';
import { expectCleanRecord, useBrowserSession } from './session.ts';

const stepTimeout = 180_000;
const sampleId = 'halvorin-population-infusion';

let page: Page;
let record: PageRecord;
type Population = Record<string, unknown>;

useBrowserSession(stepTimeout, async (s) => {
  ({ page, record } = s);
  await afterNewResult(page, () => page.getByTestId('sample-select').selectOption(sampleId));
});

const population = () => page.evaluate(() => window.__tidemark.scenario.population as Record<string, unknown>);
const removeButton = (name: string) => page.getByRole('button', { name, exact: true });

describe('the population extras in Chromium', () => {
  it('removes the sample’s correlation, residual error and regimen grid through the form, each field with its last entry', async () => {
    // The sample uses all three, so their sections are open.
    for (const key of ['correlations', 'residual', 'regimens']) {
      expect(await page.getByTestId(`population-extra-${key}`).evaluate((d) => (d as HTMLDetailsElement).open)).toBe(true);
    }
    // Nobody asked for periods: that section stays folded.
    expect(await page.getByTestId('population-extra-periods').evaluate((d) => (d as HTMLDetailsElement).open)).toBe(false);
    expect(await field(page, 'population.correlations[0].between[0]').inputValue()).toBe('CL');
    expect(await field(page, 'population.correlations[0].value').inputValue()).toBe('0.3');

    await removeButton('Remove correlation 1').click();
    expect((await population()).correlations).toBeUndefined();

    await typeInto(page, 'population.residual.additive', '');
    expect((await population()).residual).toEqual({ proportional: '10%' });
    await typeInto(page, 'population.residual.proportional', '');
    expect('residual' in (await population())).toBe(false);

    for (let k = 0; k < 4; k++) await removeButton('Remove amount 1').click();
    expect((await population()).regimens).toEqual({ intervals: ['8 h', '12 h'] });
    await removeButton('Remove interval 2').click();
    expect((await population()).regimens).toEqual({ intervals: ['8 h'] });
    await removeButton('Remove interval 1').click();
    expect('regimens' in (await population())).toBe(false);
  }, stepTimeout);

  it('writes exactly what is typed: a correlation, a residual error, a 2×2 regimen grid and the periods', async () => {
    await field(page, 'population.subjects').fill('40');
    await page.getByTestId('add-population-correlation').click();
    // The first pair of named varying quantities in scenario order: V1 (central volume), CL.
    expect(await field(page, 'population.correlations[0].between[0]').inputValue()).toBe('V1');
    await choose(page, 'population.correlations[0].between[0]', 'CL');
    await choose(page, 'population.correlations[0].between[1]', 'V1');
    await typeInto(page, 'population.correlations[0].value', '-0.25');

    await typeInto(page, 'population.residual.additive', '0.4');
    await typeInto(page, 'population.residual.proportional', '12%');

    await page.getByTestId('add-regimen-amounts').click();
    await page.getByTestId('add-regimen-amounts').click();
    // A new entry starts from the dose line's own amount.
    expect(await field(page, 'population.regimens.amounts[1]').inputValue()).toBe('1000');
    await typeInto(page, 'population.regimens.amounts[0]', '750');
    await typeInto(page, 'population.regimens.amounts[1]', '1250');
    await page.getByTestId('add-regimen-intervals').click();
    await page.getByTestId('add-regimen-intervals').click();
    await typeInto(page, 'population.regimens.intervals[0]', '8');
    await typeInto(page, 'population.regimens.intervals[1]', '12');
    await typeInto(page, 'population.regimens.ceilingAtLeast', '85%');

    await page.getByTestId('population-extra-periods').locator('summary').click();
    await page.getByTestId('population-period-last-interval').check();
    await page.getByTestId('population-period-steady-state').check();
    await typeInto(page, 'population.periods[2]', '3');

    const p = await population();
    expect(p.correlations).toEqual([{ between: ['CL', 'V1'], value: -0.25 }]);
    expect(p.residual).toEqual({ additive: '0.4 mg/L', proportional: '12%' });
    expect(p.regimens).toEqual({ amounts: ['750 mg', '1250 mg'], intervals: ['8 h', '12 h'], ceilingAtLeast: '85%' });
    // Written in a fixed order, words first, so each checkbox carries its own index as its path.
    expect(p.periods).toEqual(['steady state', 'last interval', 3]);
    expect(await page.getByTestId('population-period-last-interval').getAttribute('data-path')).toBe('population.periods[1]');
  }, stepTimeout);

  it('runs 40 subjects, draws the observation band as a dashed outline equal to the result, and marks the best of 4 regimens', async () => {
    await page.getByTestId('run-population').click();
    await page.waitForFunction(() => window.__tidemarkPopulation.result?.subjects === 40 && (window.__tidemarkPopulation.chart?.data.datasets.length ?? 0) === 5, undefined, { timeout: stepTimeout });
    const shown = await page.evaluate(() => {
      const chart = window.__tidemarkPopulation.chart!;
      return {
        sent: window.__tidemarkPopulation.sent as { population: Population },
        result: window.__tidemarkPopulation.result!,
        datasets: chart.data.datasets.map((d) => ({ label: d.label, data: d.data as { x: number; y: number }[], dash: (d as { borderDash?: number[] }).borderDash ?? null, fill: (d as { fill?: unknown }).fill })),
        legend: chart.legend?.legendItems?.map((i) => i.text) ?? [],
      };
    });
    // What ran is what was typed.
    expect(shown.sent.population).toEqual(await population());
    // The engine read the typed residual error in the scenario's units (mg/L, a share).
    expect(shown.result.settings.residual?.additive).toBeCloseTo(0.4, 12);
    expect(shown.result.settings.residual?.proportional).toBeCloseTo(0.12, 12);

    const obs = shown.result.observationBands!.central;
    const times = shown.result.times;
    const asPoints = (values: (number | null)[]) => times.flatMap((x, i) => (values[i] === null || !Number.isFinite(values[i]) ? [] : [{ x, y: values[i] as number }]));
    const low = shown.datasets.find((d) => d.label === '5th percentile of simulated observations');
    const high = shown.datasets.find((d) => d.label === 'simulated observations (with residual error)');
    expect(low?.data).toEqual(asPoints(obs['5']));
    expect(high?.data).toEqual(asPoints(obs['95']));
    expect(low?.dash).toEqual([6, 4]);
    expect(high?.dash).toEqual([6, 4]);
    expect([low?.fill, high?.fill]).toEqual([false, false]);
    // One legend entry for the outline; the band's and the outline's lower edges have none.
    expect(shown.legend).toEqual(['5th to 95th percentile', 'median', 'simulated observations (with residual error)']);
    // Before the first infusion every concentration is 0, so an observation there is the additive
    // error alone, 0.4 mg/L × a standard normal: its 5th and 95th percentiles are ∓0.4 × 1.6449
    // (normal quantile, from memory). With 40 subjects the sample percentile's standard error is
    // √(0.05·0.95/40)/φ(1.6449) × 0.4 ≈ 0.13 mg/L (order statistics, common practice): 4 of them.
    expect(times[0]).toBe(0);
    expect(shown.result.bands.central['95'][0]).toBe(0);
    expect(Math.abs((obs['95'][0] as number) - 0.4 * 1.6449)).toBeLessThan(4 * 0.134);
    expect(Math.abs((obs['5'][0] as number) + 0.4 * 1.6449)).toBeLessThan(4 * 0.134);

    const rows = page.getByTestId('population-regimens').locator('tbody tr');
    expect(await rows.count()).toBe(4);
    const grid = shown.result.regimens!;
    expect(grid.rows.map((r) => r.regimen)).toHaveLength(4);
    expect(grid.best).not.toBeNull();
    expect(await page.getByTestId('population-best-regimen').count()).toBe(1);
    expect(await page.getByTestId('population-best-regimen').textContent()).toContain(`★ best: ${grid.rows[grid.best!].regimen}`);
    expect(await rows.nth(grid.best!).getAttribute('data-testid')).toBe('population-best-regimen');
    // The same grid as a heat map: a row per amount, a column per interval, each cell the ranking's share (one decimal, as the table).
    const heat = page.getByTestId('population-heat-map');
    const amounts = [...new Set(grid.rows.map((r) => r.amount))];
    const intervals = [...new Set(grid.rows.map((r) => r.interval))];
    expect(await heat.locator('tbody tr').count()).toBe(amounts.length);
    expect(await heat.locator('thead th').count()).toBe(intervals.length + 1);
    const best = grid.rows[grid.best!];
    const bestCell = page.getByTestId('population-heat-best');
    expect(await bestCell.count()).toBe(1);
    expect(await bestCell.textContent()).toMatch(new RegExp(`^★ ${(100 * (best.joint ?? best.ceiling).probability).toFixed(1)}%`));
    const at = await heat.locator('tbody tr').nth(amounts.indexOf(best.amount)).locator('td').nth(intervals.indexOf(best.interval)).getAttribute('data-testid');
    expect(at).toBe('population-heat-best');
    await heat.screenshot({ path: join(repoRoot, 'tests/artifacts/population-heat-map.png') });
    await expect.poll(() => page.getByTestId('population-caution').textContent()).toMatch(/not dosing advice/);

    mkdirSync(join(repoRoot, 'tests/artifacts'), { recursive: true });
    await page.evaluate(() => window.scrollTo(0, 0));
    await page.screenshot({ path: join(repoRoot, 'tests/artifacts/population-extras.png'), fullPage: true });
    // The two parts at full size, for a reader of the long page.
    await page.getByTestId('population-extra-regimens').screenshot({ path: join(repoRoot, 'tests/artifacts/population-extras-regimens.png') });
    await page.getByTestId('population-results').screenshot({ path: join(repoRoot, 'tests/artifacts/population-extras-results.png') });
  }, stepTimeout);

  it('names a correlation that breaks positive definiteness beside its value field, keeping what was typed', async () => {
    // A third named varying quantity: the tissue volume.
    await page.getByTestId('varies-compartments[1].volume').check();
    await typeInto(page, 'compartments[1].volume.cv', '20%');
    await typeInto(page, 'compartments[1].volume.name', 'V2');
    // CL–V1 −0.25 is there; V1–V2 0.9 and V2–CL 0.9 cannot hold with it: the determinant of
    // [[1, .9, −.25], [.9, 1, .9], [−.25, .9, 1]] is 1 − 2·0.2025 − 0.81 − 0.81 − 0.0625 < 0.
    await page.getByTestId('add-population-correlation').click();
    await page.getByTestId('add-population-correlation').click();
    const pairs = (await population()).correlations as { between: string[] }[];
    expect(pairs.map((c) => [...c.between].sort().join('–'))).toEqual(['CL–V1', 'V1–V2', 'CL–V2']);
    await typeInto(page, 'population.correlations[1].value', '0.9');
    await typeInto(page, 'population.correlations[2].value', '0.9');
    const [response] = await Promise.all([page.waitForResponse((r) => r.url().endsWith('/api/population') && r.request().method() === 'POST'), page.getByTestId('run-population').click()]);
    expect(response.status()).toBe(400);
    const { problems } = (await response.json()) as { problems: { path: string; message: string }[] };
    expect(problems).toHaveLength(1);
    expect(problems[0].path).toMatch(/^population\.correlations\[[012]\]\.value$/);
    expect(problems[0].message).toMatch(/not positive definite/);
    await page.getByTestId('population-extra-correlations').screenshot({ path: join(repoRoot, 'tests/artifacts/population-extras-correlations.png') });
    const k = Number(/\[(\d)\]/.exec(problems[0].path)![1]);
    await expect.poll(() => page.locator(`#f-population-correlations-${k}-value-error`).textContent()).toBe(problems[0].message);
    expect(await field(page, problems[0].path).getAttribute('aria-invalid')).toBe('true');
    expect(await field(page, 'population.correlations[1].value').inputValue()).toBe('0.9');
    expect(await field(page, 'population.correlations[2].value').inputValue()).toBe('0.9');
  }, stepTimeout);

  it('offers "varies between subjects" and "depends on the subject" on a dose’s bioavailability and lag', async () => {
    const dose = () => page.evaluate(() => window.__tidemark.scenario.doses?.[0] as Record<string, unknown>);
    await typeInto(page, 'doses[0].bioavailability', '80%');
    expect((await dose()).bioavailability).toBe(0.8);
    await page.getByTestId('varies-doses[0].bioavailability').check();
    expect((await dose()).bioavailability).toEqual({ typical: 0.8, cv: '30%' });
    await typeInto(page, 'doses[0].bioavailability.cv', '15%');
    await typeInto(page, 'doses[0].bioavailability.name', 'F');
    expect((await dose()).bioavailability).toEqual({ typical: 0.8, cv: '15%', name: 'F' });
    expect(await field(page, 'doses[0].bioavailability.cv').getAttribute('title')).toMatch(/logit-normal/);
    await page.getByTestId('relations-doses[0].bioavailability').locator('summary').click();
    await page.locator('#regimen-form').screenshot({ path: join(repoRoot, 'tests/artifacts/population-extras-dose.png') });
    await page.getByTestId('varies-doses[0].bioavailability').uncheck();
    expect((await dose()).bioavailability).toBe(0.8);
    await typeInto(page, 'doses[0].bioavailability', '');
    expect('bioavailability' in (await dose())).toBe(false);

    await typeInto(page, 'doses[0].lag', '0.5');
    await page.getByTestId('varies-doses[0].lag').check();
    expect((await dose()).lag).toEqual({ typical: '0.5 h', cv: '30%' });
    await page.getByTestId('relations-doses[0].lag').locator('summary').click();
    await page.getByTestId('add-relation-doses[0].lag').click();
    expect((await dose()).lag).toEqual({ typical: '0.5 h', cv: '30%', covariates: [{ on: '', power: 1 }] });
    await removeButton('Remove relation 1').click();
    await page.getByTestId('varies-doses[0].lag').uncheck();
    expect((await dose()).lag).toBe('0.5 h');
    expect(await page.getByTestId('relations-doses[0].bioavailability').count()).toBe(1);
  }, stepTimeout);

  it('made no console errors, page errors or CSP violations', async () => {
    // The one 400 is the correlation that cannot hold, sent on purpose.
    await expectCleanRecord(record, 1);
  });
});
