// The subject and covariate relations on the page, in a real browser (Debian's Chromium through
// playwright-core) against the real server: the brennock sample opened, a subject typed into
// the Subject section, a power relation on creatinine clearance added to the clearance, run;
// the derived CrCl shown equals Cockcroft–Gault computed here, the clearance's field and the
// diagram show typical·(CrCl/100 mL/min)^0.75; a relation on a covariate the subject lacks is
// named beside its field with the typed text kept; removing the relations and the subject
// writes the plain values back; a sample with a subject opens the section and its relations by
// itself. No console errors and no CSP violations on the way.
// The screenshot goes to tests/artifacts/subject.png (git-ignored).
import { mkdirSync } from 'node:fs';
import { join } from 'node:path';
import type { Page } from 'playwright-core';
import { describe, expect, it } from 'vitest';
import { repoRoot } from './harness.ts';
import { afterNewResult, choose, field, runAndWait, typeInto, type PageRecord } from './page-helpers.ts';
import { useBrowserSession } from './session.ts';

const stepTimeout = 120_000;
const clPath = 'transfers[1].cl';

let page: Page;
let record: PageRecord;

useBrowserSession(stepTimeout, async (s) => {
  ({ page, record } = s);
  // The default sample (brennock, one compartment with an oral depot) is opened and run.
});

// The subject typed below.
const age = 70; // year
const weight = 60; // kg
const serumCreatinine = 1.1; // mg/dL
// Cockcroft & Gault 1976, Nephron 16:31: (140 − age)·weight/(72·Scr) mL/min, × 0.85 for women.
const crclExpected = (((140 - age) * weight) / (72 * serumCreatinine)) * 0.85;
// The brennock sample's clearance, 4.2 L/h, with a power relation of 0.75 on CrCl at 100 mL/min.
const clTypical = 4.2;
const clExpected = clTypical * Math.pow(crclExpected / 100, 0.75);

/** A number as the page shows it, and the largest rounding error its digits allow (half a unit in the last place). */
function shown(text: string): { value: number; halfUlp: number } {
  const m = /[-+]?\d+(?:\.(\d+))?/.exec(text);
  if (!m) throw new Error(`no number in “${text}”`);
  const decimals = m[1]?.length ?? 0;
  return { value: Number(m[0]), halfUlp: 0.5 * 10 ** -decimals };
}

/** The clearance as the store holds it. */
const scenarioCl = () => page.evaluate(() => window.__tidemark.scenario.transfers?.[1].cl);

describe('the subject and covariate relations in Chromium', () => {
  it('keeps the Subject section folded for a scenario without a subject, and writes subject.<name> as it is typed', async () => {
    const details = page.getByTestId('subject-details');
    expect(await details.evaluate((d) => (d as HTMLDetailsElement).open)).toBe(false);
    expect(await page.evaluate(() => window.__tidemark.scenario.subject)).toBeUndefined();
    await details.locator('summary').click();
    await typeInto(page, 'subject.weight', String(weight));
    await typeInto(page, 'subject.height', '165');
    await typeInto(page, 'subject.age', String(age));
    await choose(page, 'subject.sex', 'female');
    await typeInto(page, 'subject.serumCreatinine', String(serumCreatinine));
    expect(await page.evaluate(() => window.__tidemark.scenario.subject)).toEqual({ weight: '60 kg', height: '165 cm', age: '70 year', sex: 'female', serumCreatinine: '1.1 mg/dL' });
  }, stepTimeout);

  it('adds a power relation on crcl to the clearance as { typical, covariates }', async () => {
    await page.getByTestId(`relations-${clPath}`).locator('summary').click();
    await page.getByTestId(`add-relation-${clPath}`).click();
    await typeInto(page, `${clPath}.covariates[0].on`, 'crcl');
    await typeInto(page, `${clPath}.covariates[0].power`, '0.75');
    await typeInto(page, `${clPath}.covariates[0].reference`, '100');
    expect(await page.locator(`[data-unit-for="${clPath}.covariates[0].reference"]`).inputValue()).toBe('mL/min');
    expect(await scenarioCl()).toEqual({ typical: '4.2 L/h', covariates: [{ on: 'crcl', power: 0.75, reference: '100 mL/min' }] });
  }, stepTimeout);

  it('runs, and shows CrCl by Cockcroft–Gault and the clearance for this subject beside the field and on the diagram', async () => {
    expect(await runAndWait(page)).toBe(200);
    // The derived creatinine clearance, with its rule and source.
    const crclText = await page.getByTestId('derived-value-crcl').innerText();
    const crcl = shown(crclText);
    expect(Math.abs(crcl.value - crclExpected)).toBeLessThanOrEqual(crcl.halfUlp * 1.0001);
    expect(await page.getByTestId('derived-crcl').innerText()).toMatch(/mL\/min[\s\S]*Cockcroft & Gault 1976/);
    // The clearance's field: typical 4.2 L/h → typical·(CrCl/100)^0.75 for this subject.
    const note = await page.getByTestId(`adjustment-${clPath}`).innerText();
    expect(note).toMatch(/typical 4\.2 L\/h → .* L\/h for this subject/);
    expect(note).toContain('(crcl / 100 mL/min)^0.75');
    const valueText = await page.getByTestId(`adjusted-value-${clPath}`).innerText();
    const cl = shown(valueText);
    expect(Math.abs(cl.value - clExpected)).toBeLessThanOrEqual(cl.halfUlp * 1.0001);
    // The engine's own number agrees with the formula far below the digits shown.
    const engine = await page.evaluate((p) => window.__tidemark.lastResult?.subject?.adjustments.find((a) => a.path === p)?.value, clPath);
    expect(engine).toBeCloseTo(clExpected, 10);
    // The diagram's elimination label shows the same value with the mark, and the legend says what the mark means.
    const diagramText = await page.getByTestId('diagram').textContent();
    expect(diagramText).toContain(`CL ${valueText} ◆`);
    expect(await page.getByTestId('diagram-legend').innerText()).toContain('◆ for this subject, from covariate relations');
  }, stepTimeout);

  it('names a relation on a covariate the subject lacks beside its field, keeping what was typed', async () => {
    await page.getByTestId(`add-relation-${clPath}`).click();
    await typeInto(page, `${clPath}.covariates[1].on`, 'albumin');
    await typeInto(page, `${clPath}.covariates[1].power`, '1');
    await typeInto(page, `${clPath}.covariates[1].reference`, '4');
    expect(await runAndWait(page)).toBe(400);
    const on = field(page, `${clPath}.covariates[1].on`);
    expect(await on.getAttribute('aria-invalid')).toBe('true');
    const message = await on.locator('xpath=following-sibling::p[contains(@class, "field-error")]').innerText();
    expect(message).toContain("no covariate 'albumin'");
    expect(await on.inputValue()).toBe('albumin');
    expect(await page.evaluate(() => ((window.__tidemark.scenario.transfers?.[1].cl as { covariates: { on: string }[] }).covariates[1].on))).toBe('albumin');
    const dir = join(repoRoot, 'tests/artifacts');
    mkdirSync(dir, { recursive: true });
    const clip = await page.locator('section[aria-labelledby="model-heading"]').evaluate((el) => {
      const r = el.getBoundingClientRect();
      return { x: r.left + window.scrollX, y: r.top + window.scrollY, width: r.width, height: r.height };
    });
    await page.screenshot({ path: join(dir, 'subject.png'), fullPage: true, clip });
  }, stepTimeout);

  it('writes the plain clearance back when the last relation goes, and removes subject when it is cleared', async () => {
    await page.getByRole('button', { name: 'Remove relation 2 on albumin' }).click();
    expect(await scenarioCl()).toEqual({ typical: '4.2 L/h', covariates: [{ on: 'crcl', power: 0.75, reference: '100 mL/min' }] });
    await page.getByRole('button', { name: 'Remove relation 1 on crcl' }).click();
    expect(await scenarioCl()).toBe('4.2 L/h');
    for (const name of ['weight', 'height', 'age', 'serumCreatinine']) await typeInto(page, `subject.${name}`, '');
    await choose(page, 'subject.sex', '');
    expect(await page.evaluate(() => 'subject' in window.__tidemark.scenario)).toBe(false);
  }, stepTimeout);

  it('opens the Subject section and the relations by itself for a scenario that has them, beside the population toggle', async () => {
    await afterNewResult(page, () => page.getByTestId('sample-select').selectOption('halvorin-population-infusion'));
    expect(await page.getByTestId('subject-details').evaluate((d) => (d as HTMLDetailsElement).open)).toBe(true);
    expect(await field(page, 'subject.weight').inputValue()).toBe('75');
    expect(await page.getByTestId('relations-transfers[0].cl').evaluate((d) => (d as HTMLDetailsElement).open)).toBe(true);
    expect(await field(page, 'transfers[0].cl.covariates[0].on').inputValue()).toBe('crcl');
    // The clearance also varies between subjects: both controls show, and the note gives the typical subject's value.
    expect(await page.getByTestId('varies-transfers[0].cl').isChecked()).toBe(true);
    expect(await page.getByTestId('adjustment-transfers[0].cl').innerText()).toMatch(/typical 6 L\/h → .* L\/h for this subject/);
    expect(record.pageErrors).toEqual([]);
    expect(record.consoleErrors.filter((e) => !/status of 400/.test(e.text))).toEqual([]);
    expect(await record.cspViolations()).toEqual([]);
    expect(record.cspMessages).toEqual([]);
  }, stepTimeout);
});
