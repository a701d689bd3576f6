/**
 * One page of the app in Debian's Chromium against a real server, for a whole test file:
 * registered with beforeAll/afterAll, read through the returned getter once the file's tests run.
 */
import type { Browser, BrowserContext, Page } from 'playwright-core';
import { afterAll, beforeAll, expect } from 'vitest';
import { ensureClientBuilt, launchChromium, startServer, type RunningServer } from './harness.ts';
import { openApp, type PageRecord } from './page-helpers.ts';

export interface BrowserSession {
  server: RunningServer;
  context: BrowserContext;
  page: Page;
  record: PageRecord;
}

/** Opens the app (the default sample run) before the file's tests, then `prepare` (a sample to open, say); closes everything after. */
export function useBrowserSession(timeout: number, prepare?: (s: BrowserSession) => Promise<void>): () => BrowserSession {
  let browser: Browser | null = null;
  let session: BrowserSession | null = null;
  beforeAll(async () => {
    ensureClientBuilt();
    browser = await launchChromium();
    const server = await startServer();
    const context = await browser.newContext({ viewport: { width: 1366, height: 900 }, deviceScaleFactor: 1, acceptDownloads: false });
    const { page, record } = await openApp(context, server.baseUrl);
    session = { server, context, page, record };
    await prepare?.(session);
  }, timeout);
  afterAll(async () => {
    await session?.context.close();
    await browser?.close();
    await session?.server.close();
  });
  return () => {
    if (!session) throw new Error('the browser session is not open (beforeAll failed)');
    return session;
  };
}

/** No page errors, no CSP violations, and no failed response or console error but the 400s a test sent on purpose. */
export async function expectCleanRecord(record: PageRecord, deliberate400s: number): Promise<void> {
  expect(record.pageErrors).toEqual([]);
  expect(record.cspMessages).toEqual([]);
  expect(await record.cspViolations()).toEqual([]);
  expect(record.failedResponses.map((r) => r.status)).toEqual(new Array<number>(deliberate400s).fill(400));
  expect(record.consoleErrors.filter((e) => !/status of 400/.test(e.text))).toEqual([]);
}
