// The scenario library in a real browser (Debian's Chromium through playwright-core) against the
// real app with a store in a temporary data folder (TIDEMARK_DATA): saving as version 1, an edit
// kept as a draft and offered back after a reload, version 2 with its history and readable diff,
// a run recorded against the saved version, Ctrl+S, delete with Undo, duplicate, a report issued
// with unsaved changes (saved first, then recorded against the new version). One page for the file.
// Screenshots: tests/artifacts/library-draft-banner.png, tests/artifacts/library-panel.png.
import { mkdirSync, mkdtempSync, rmSync } from 'node:fs';
import type { Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { Browser, BrowserContext, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createApp, defaultServerLimits } from '../../server/app.ts';
import { loadSamples } from '../../server/samples.ts';
import { StoreHandle } from '../../server/store/handle.ts';
import { storeFileOf } from '../../server/store/location.ts';
import { SimulationPool } from '../../server/worker-pool.ts';
import { clientDir, ensureClientBuilt, launchChromium, repoRoot } from './harness.ts';
import { field, openApp, typeInto, type PageRecord } from './page-helpers.ts';
import { expectCleanRecord } from './session.ts';

const stepTimeout = 120_000;
const dataDir = mkdtempSync(join(tmpdir(), 'tidemark-library-'));

let browser: Browser | null = null;
let context: BrowserContext | null = null;
let server: Server | null = null;
let pool: SimulationPool | null = null;
let store: StoreHandle | null = null;
let baseUrl = '';
let page: Page;
let record: PageRecord;
/** The kinds of the dialogs the page opened (beforeunload, confirm), in order. */
const dialogs: string[] = [];

beforeAll(async () => {
  ensureClientBuilt();
  browser = await launchChromium();
  pool = new SimulationPool({ size: 1, timeBudgetMs: 30_000, maxQueue: 16 });
  store = new StoreHandle(storeFileOf({ TIDEMARK_DATA: dataDir }, repoRoot));
  const app = createApp({ pool, samples: loadSamples(), clientDir, limits: defaultServerLimits, store });
  server = await new Promise<Server>((resolve, reject) => {
    const s = app.listen(0, '127.0.0.1');
    s.once('listening', () => resolve(s));
    s.once('error', reject);
  });
  baseUrl = `http://127.0.0.1:${(server.address() as AddressInfo).port}/`;
  context = await browser.newContext({ viewport: { width: 1366, height: 900 }, deviceScaleFactor: 1, acceptDownloads: false });
  ({ page, record } = await openApp(context, baseUrl));
  // "Leave with unsaved changes?" and "replace unsaved changes?" are answered yes, as a user who means it.
  page.on('dialog', (d) => {
    dialogs.push(d.type());
    void d.accept();
  });
}, stepTimeout);

afterAll(async () => {
  await context?.close();
  await browser?.close();
  server?.closeAllConnections();
  await new Promise<void>((resolve) => (server ? server.close(() => resolve()) : resolve()));
  await pool?.close();
  store?.close();
  rmSync(dataDir, { recursive: true, force: true });
});

async function api<T>(path: string): Promise<T> {
  const res = await fetch(new URL(path, baseUrl));
  expect(res.status).toBe(200);
  return (await res.json()) as T;
}

const state = () => page.getByTestId('work-state').innerText();
const draftKept = () => page.evaluate(() => localStorage.getItem('tidemark.draft'));

/** Save → the dialog → Save; resolves when the header names the new version. */
async function saveAs(version: number, note: string, open: () => Promise<void> = () => page.getByTestId('save-library').click()): Promise<void> {
  await open();
  await page.getByTestId('save-dialog').waitFor();
  await page.getByTestId('save-note').fill(note);
  await page.getByTestId('save-author').fill('Ada Reviewer');
  await page.getByTestId('save-confirm').click();
  await expect.poll(state).toMatch(new RegExp(`^saved as “.+” v${version}$`));
}

function shot(name: string): string {
  const dir = join(repoRoot, 'tests/artifacts');
  mkdirSync(dir, { recursive: true });
  return join(dir, name);
}

describe('the scenario library in Chromium', () => {
  it('saves the sample on screen as version 1 and says so in the header', async () => {
    expect(await state()).toBe('not in the library');
    await saveAs(1, 'first look');
    const list = await api<{ scenarios: { id: number; name: string; latestVersion: number; author: string }[]; total: number }>('api/scenarios');
    expect(list.total).toBe(1);
    expect(list.scenarios[0]).toMatchObject({ name: 'Brennock 400 mg by mouth twice daily', latestVersion: 1, author: 'Ada Reviewer' });
    expect(await draftKept()).toBeNull();
  }, stepTimeout);

  it('keeps an edit as a draft and offers it back after a reload; Restore keeps the link to version 1', async () => {
    await typeInto(page, 'doses[0].amount', '500');
    await expect.poll(state).toMatch(/v1 · unsaved changes$/);
    await expect.poll(async () => JSON.parse((await draftKept()) ?? 'null')?.scenario?.doses?.[0]?.amount).toBe('500 mg');
    // The reload asks first (beforeunload), answered yes above; the page opens its default sample again.
    const asked = dialogs.length;
    await page.reload({ waitUntil: 'networkidle' });
    expect(dialogs.slice(asked)).toContain('beforeunload');
    await page.waitForFunction(() => window.__tidemark.lastResult !== null && !document.getElementById('run')?.hasAttribute('aria-busy'));
    const banner = page.getByTestId('draft-banner');
    await banner.waitFor({ state: 'visible' });
    expect(await banner.innerText()).toMatch(/Unsaved work from .+ \(Brennock 400 mg by mouth twice daily\) was kept\.[\s\S]*version 1/);
    expect(await page.evaluate(() => window.__tidemark.scenario.doses?.[0].amount)).toBe('400 mg');
    await page.evaluate(() => window.scrollTo(0, 0));
    await page.screenshot({ path: shot('library-draft-banner.png'), clip: { x: 0, y: 0, width: 1366, height: 260 } });
    await page.getByTestId('draft-restore').click();
    await expect.poll(() => page.evaluate(() => window.__tidemark.scenario.doses?.[0].amount)).toBe('500 mg');
    expect(await banner.isVisible()).toBe(false);
    await expect.poll(state).toMatch(/^“Brennock 400 mg by mouth twice daily” v1 · unsaved changes$/);
  }, stepTimeout);

  it('saves version 2; a run of it is recorded; the history lists both versions and the diff names the edited path', async () => {
    await saveAs(2, 'dose 500 mg');
    expect(await draftKept()).toBeNull();
    // The run of exactly version 2 goes to api/simulate?scenario=ID&version=2 and is recorded.
    const [response] = await Promise.all([page.waitForResponse((r) => r.url().includes('/api/simulate?')), page.getByTestId('run').click()]);
    expect(response.status()).toBe(200);
    expect(response.headers()['x-tidemark-run']).toMatch(/^\d+$/);
    await page.waitForFunction(() => !document.getElementById('run')?.hasAttribute('aria-busy'));
    expect(await page.locator('#run-status').innerText()).toContain('Recorded in the library as a run of version 2.');
    await page.getByTestId('open-library').click();
    const dialog = page.getByTestId('library-dialog');
    await dialog.waitFor();
    await expect.poll(() => dialog.locator('[data-testid^="version-row-"]').count()).toBe(2);
    await page.getByTestId('diff-show').click();
    // The one change between the versions, in the diff's own words (models/scenario/diff.ts).
    await expect.poll(() => page.getByTestId('diff').innerText()).toContain('doses[0].amount: "400 mg" → "500 mg"');
    expect(await page.getByTestId('diff').locator('li').count()).toBe(1);
    expect(await page.getByTestId('library-runs').locator('tbody tr').count()).toBe(1);
    expect(await page.getByTestId('library-runs').innerText()).toMatch(/v2[\s\S]*Cmax/);
    await page.screenshot({ path: shot('library-panel.png') });
    await page.getByTestId('library-close').click();
  }, stepTimeout);

  it('Ctrl+S opens the save dialog instead of the browser’s, and saves version 3', async () => {
    await typeInto(page, 'title', 'Brennock, reviewed');
    await page.evaluate(() => {
      // Read after the page's own handler on document: was the browser's default (save page) refused?
      window.addEventListener('keydown', (e) => {
        if (e.key.toLowerCase() === 's') document.body.setAttribute('data-save-key-prevented', String(e.defaultPrevented));
      });
    });
    await saveAs(3, 'retitled', () => page.keyboard.press('ControlOrMeta+s'));
    expect(await page.locator('body').getAttribute('data-save-key-prevented')).toBe('true');
    const versions = await api<{ versions: { version: number; note: string }[] }>(`api/scenarios/${(await api<{ scenarios: { id: number }[] }>('api/scenarios')).scenarios[0].id}/versions`);
    expect(versions.versions.map((v) => [v.version, v.note])).toEqual([
      [3, 'retitled'],
      [2, 'dose 500 mg'],
      [1, 'first look'],
    ]);
  }, stepTimeout);

  it('deletes a scenario from the library and puts it back with Undo', async () => {
    const [{ id }] = (await api<{ scenarios: { id: number }[] }>('api/scenarios')).scenarios;
    await page.getByTestId('open-library').click();
    await page.getByTestId(`library-delete-${id}`).click();
    await expect.poll(() => page.getByTestId(`library-row-${id}`).count()).toBe(0);
    expect((await api<{ deleted: boolean }>(`api/scenarios/${id}`)).deleted).toBe(true);
    expect(await page.getByTestId('library-status').innerText()).toMatch(/Deleted “Brennock 400 mg by mouth twice daily”/);
    await page.getByTestId('library-undo').click();
    await expect.poll(() => page.getByTestId(`library-row-${id}`).count()).toBe(1);
    expect((await api<{ deleted: boolean }>(`api/scenarios/${id}`)).deleted).toBe(false);
    await page.getByTestId('library-close').click();
    expect(await field(page, 'title').inputValue()).toBe('Brennock, reviewed');
  }, stepTimeout);

  it('duplicates a stored scenario as a new one named “… (copy)” with the same content', async () => {
    const [{ id }] = (await api<{ scenarios: { id: number }[] }>('api/scenarios')).scenarios;
    await page.getByTestId('open-library').click();
    await page.getByTestId(`library-duplicate-${id}`).click();
    await expect.poll(async () => (await api<{ total: number }>('api/scenarios')).total).toBe(2);
    const list = await api<{ scenarios: { id: number; name: string; fingerprint: string }[] }>('api/scenarios');
    const original = list.scenarios.find((x) => x.id === id)!;
    const copy = list.scenarios.find((x) => x.id !== id)!;
    expect(copy.name).toBe(`${original.name} (copy)`);
    expect(copy.fingerprint).toBe(original.fingerprint);
    await page.getByTestId('library-close').click();
  }, stepTimeout);

  it('Download report with unsaved changes saves first, and the report is recorded against the new version', async () => {
    const link = await page.evaluate(() => document.querySelector('[data-testid="work-state"]')?.textContent ?? '');
    await typeInto(page, 'doses[0].amount', '600');
    await expect.poll(state).toMatch(/unsaved changes$/);
    await page.getByTestId('download-report').click();
    await page.getByTestId('save-dialog').waitFor();
    await page.getByTestId('save-note').fill('for the report');
    const [response] = await Promise.all([page.waitForResponse((r) => r.url().includes('/api/report?'), { timeout: 60_000 }), page.getByTestId('save-confirm').click()]);
    expect(response.status()).toBe(200);
    const reportId = response.headers()['x-tidemark-report'];
    expect(reportId).toMatch(/^\d+$/);
    await expect.poll(state).toMatch(/v\d+$/);
    const scenarios = (await api<{ scenarios: { id: number; name: string; latestVersion: number }[] }>('api/scenarios')).scenarios;
    const saved = scenarios.find((x) => link.includes(x.name) && !x.name.endsWith('(copy)'))!;
    const reports = await api<{ reports: { id: number; version: number; requestedBy: string; fingerprint: string }[] }>(`api/scenarios/${saved.id}/reports`);
    expect(reports.reports).toHaveLength(1);
    expect(reports.reports[0]).toMatchObject({ id: Number(reportId), version: saved.latestVersion, requestedBy: 'Ada Reviewer' });
    // The fingerprint printed on the report finds that version.
    const found = await api<{ versions: { scenarioId: number; version: number }[] }>(`api/reports?fingerprint=${reports.reports[0].fingerprint}`);
    expect(found.versions).toContainEqual(expect.objectContaining({ scenarioId: saved.id, version: saved.latestVersion }));
    await page.getByTestId('open-library').click();
    await page.getByTestId(`library-history-${saved.id}`).click();
    await expect.poll(() => page.getByTestId('library-reports').locator('tbody tr').count()).toBe(1);
    await page.getByTestId('library-close').click();
  }, stepTimeout);

  it('a full storage does not break editing: the page says once that no draft is kept', async () => {
    await page.evaluate(() => {
      Storage.prototype.setItem = () => {
        throw new DOMException('full', 'QuotaExceededError');
      };
    });
    await typeInto(page, 'doses[0].amount', '650');
    await expect.poll(() => page.locator('#notice').innerText()).toMatch(/would not keep a draft/);
    await page.evaluate(() => (document.getElementById('notice')!.textContent = ''));
    await typeInto(page, 'doses[0].amount', '700');
    // pagehide writes at once; the announcement would land in the next frame.
    await page.evaluate(() => new Promise((r) => (dispatchEvent(new Event('pagehide')), requestAnimationFrame(() => requestAnimationFrame(r)))));
    expect(await page.locator('#notice').innerText()).toBe('');
    expect(await state()).toMatch(/unsaved changes$/);
    expect(await page.evaluate(() => window.__tidemark.scenario.doses?.[0].amount)).toBe('700 mg');
  }, stepTimeout);

  it('made no console errors, page errors or CSP violations', async () => {
    await expectCleanRecord(record, 0);
  });
});
