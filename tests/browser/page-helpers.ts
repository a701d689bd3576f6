/**
 * Page-side helpers for the browser tests: filling fields the way a user does (click,
 * select what is there, type key by key), waiting for a run to finish, reading the plot's
 * pixels, and recording console errors, uncaught exceptions and CSP violations.
 */
import { readFile } from 'node:fs/promises';
import type { BrowserContext, Locator, Page, Response } from 'playwright-core';

declare global {
  interface Window {
    /** Filled by the init script below; not part of the page. */
    __cspViolations?: { directive: string; blocked: string; source: string }[];
  }
}

/** The input, select or textarea bound to a JSON path of the scenario. */
export function field(page: Page, path: string): Locator {
  return page.locator(`[data-path="${path}"]`);
}

/** The unit picker beside the number box of a path. */
export function unitOf(page: Page, path: string): Locator {
  return page.locator(`[data-unit-for="${path}"]`);
}

/** Replaces a text box's content by typing, one key event per character. */
export async function typeInto(page: Page, path: string, text: string): Promise<void> {
  const input = field(page, path);
  await input.click();
  await input.press('ControlOrMeta+a');
  await input.press('Backspace');
  await input.pressSequentially(text);
  // Leaving the field fires `change`, as a user tabbing on does.
  await input.press('Tab');
}

export async function choose(page: Page, path: string, value: string): Promise<void> {
  await field(page, path).selectOption(value);
}

function isSimulatePost(r: Response): boolean {
  return r.url().endsWith('/api/simulate') && r.request().method() === 'POST';
}

/**
 * Clicks Run and waits for the API answer; on 200 also waits until the page holds a new
 * result object (the figures and plot are drawn in the same task). Returns the status.
 */
export async function runAndWait(page: Page): Promise<number> {
  const before = await page.evaluateHandle(() => window.__tidemark.lastResult);
  const [response] = await Promise.all([page.waitForResponse(isSimulatePost), page.getByTestId('run').click()]);
  if (response.status() === 200) {
    await page.waitForFunction((prev) => window.__tidemark.lastResult !== null && window.__tidemark.lastResult !== prev, before);
  }
  await page.waitForFunction(() => !document.getElementById('run')?.hasAttribute('aria-busy'));
  await before.dispose();
  return response.status();
}

export interface PlotPixels {
  width: number;
  height: number;
  /** Pixels that are not fully transparent (the canvas starts transparent). */
  painted: number;
  /** Pixels within a small distance of each given colour (anti-aliased edges drift a little). */
  nearColour: number[];
  /** Variance of the pixels' grey level over the whole canvas. */
  greyVariance: number;
}

/** Reads the plot canvas back and counts what is drawn on it. */
export async function plotPixels(page: Page, colours: string[]): Promise<PlotPixels> {
  return page.getByTestId('plot').evaluate((el, hexes) => {
    const canvas = el as HTMLCanvasElement;
    const ctx = canvas.getContext('2d');
    if (!ctx) throw new Error('the plot canvas has no 2d context');
    const { data } = ctx.getImageData(0, 0, canvas.width, canvas.height);
    const targets = hexes.map((hx) => {
      const n = parseInt(hx.slice(1), 16);
      return [(n >> 16) & 255, (n >> 8) & 255, n & 255];
    });
    const near = targets.map(() => 0);
    let painted = 0;
    let sum = 0;
    let sumSq = 0;
    const count = data.length / 4;
    for (let i = 0; i < data.length; i += 4) {
      const a = data[i + 3];
      // Grey level over a white page: transparent pixels show the white panel behind.
      const grey = ((data[i] + data[i + 1] + data[i + 2]) / 3) * (a / 255) + 255 * (1 - a / 255);
      sum += grey;
      sumSq += grey * grey;
      if (a === 0) continue;
      painted++;
      if (a < 200) continue;
      targets.forEach(([r, g, b], k) => {
        if (Math.abs(data[i] - r) + Math.abs(data[i + 1] - g) + Math.abs(data[i + 2] - b) <= 60) near[k]++;
      });
    }
    const mean = sum / count;
    return { width: canvas.width, height: canvas.height, painted, nearColour: near, greyVariance: sumSq / count - mean * mean };
  }, colours);
}

export interface PageRecord {
  consoleErrors: { text: string; url: string }[];
  cspMessages: string[];
  pageErrors: string[];
  failedResponses: { status: number; url: string }[];
  cspViolations(): Promise<NonNullable<Window['__cspViolations']>>;
}

/** Starts recording before the page loads (call before `goto`). */
export async function recordPage(page: Page): Promise<PageRecord> {
  await page.addInitScript(() => {
    window.__cspViolations = [];
    document.addEventListener('securitypolicyviolation', (e) => {
      window.__cspViolations?.push({ directive: e.violatedDirective, blocked: e.blockedURI, source: `${e.sourceFile}:${e.lineNumber}` });
    });
  });
  const record: PageRecord = {
    consoleErrors: [],
    cspMessages: [],
    pageErrors: [],
    failedResponses: [],
    cspViolations: () => page.evaluate(() => window.__cspViolations ?? []),
  };
  page.on('console', (msg) => {
    if (/Content[- ]Security[- ]Policy/i.test(msg.text())) record.cspMessages.push(msg.text());
    if (msg.type() === 'error') record.consoleErrors.push({ text: msg.text(), url: msg.location().url });
  });
  page.on('pageerror', (err) => record.pageErrors.push(`${err.name}: ${err.message}`));
  page.on('response', (r) => {
    if (r.status() >= 400) record.failedResponses.push({ status: r.status(), url: r.url() });
  });
  return record;
}

/**
 * Does `action` and waits until the page holds a new result object (a run that ended in a
 * 200) and the Run button is no longer busy. For runs started other than by clicking Run:
 * opening a file, pressing Enter in a field.
 */
export async function afterNewResult<T>(page: Page, action: () => Promise<T>): Promise<T> {
  const before = await page.evaluateHandle(() => window.__tidemark.lastResult);
  const out = await action();
  await page.waitForFunction((prev) => window.__tidemark.lastResult !== null && window.__tidemark.lastResult !== prev, before);
  await page.waitForFunction(() => !document.getElementById('run')?.hasAttribute('aria-busy'));
  await before.dispose();
  return out;
}

export interface Downloaded {
  /** The name the page gave the file. */
  filename: string;
  bytes: Buffer;
}

/** Does `action` (a click that saves a file) and returns the file the browser received. Needs a context with `acceptDownloads`. */
export async function captureDownload(page: Page, action: () => Promise<unknown>): Promise<Downloaded> {
  const [download] = await Promise.all([page.waitForEvent('download'), action()]);
  const path = await download.path();
  const failure = await download.failure();
  if (failure !== null) throw new Error(`the download of ${download.suggestedFilename()} failed: ${failure}`);
  return { filename: download.suggestedFilename(), bytes: await readFile(path) };
}

/**
 * A new page of the context at the app, waited on until the default sample has been run by
 * the page itself (so nothing of that first run lands on what the test does next).
 */
export async function openApp(context: BrowserContext, baseUrl: string, viewport?: { width: number; height: number }): Promise<{ page: Page; record: PageRecord }> {
  const page = await context.newPage();
  // Waits are for events, not fixed sleeps; the bound only ends a run that hangs (2 cores, often busy).
  page.setDefaultTimeout(60_000);
  if (viewport) await page.setViewportSize(viewport);
  const record = await recordPage(page);
  await page.goto(baseUrl, { waitUntil: 'networkidle' });
  await page.waitForFunction(() => window.__tidemark.lastResult !== null && !document.getElementById('run')?.hasAttribute('aria-busy'));
  return { page, record };
}
