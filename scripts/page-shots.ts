/**
 * `npm run page:shots`: builds the page if needed, serves it on a free loopback port and
 * saves screenshots of the demo into tests/artifacts/page/ for a look by eye: the whole page,
 * the plot at twice the pixel density (whole span linear and log, one interval, steady-state
 * zoom), compare mode at 1440 px, and the print layout (a screenshot and the PDF Chromium
 * prints, print.pdf).
 */
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { ensureClientBuilt, launchChromium, repoRoot, startServer } from '../tests/browser/harness.ts';

const out = join(repoRoot, 'tests/artifacts/page');
mkdirSync(out, { recursive: true });
ensureClientBuilt();
const server = await startServer();
const browser = await launchChromium();

function say(name: string, e: unknown): void {
  console.error(`${name}: ${e instanceof Error ? e.message.split('\n')[0] : String(e)}`);
}

try {
  const page = await browser.newPage({ viewport: { width: 1280, height: 900 }, deviceScaleFactor: 2 });
  await page.goto(server.baseUrl);
  await page.waitForFunction(() => window.__tidemark?.lastResult !== null && window.__tidemark?.lastResult !== undefined);
  await page.screenshot({ path: join(out, 'demo.png'), fullPage: true, scale: 'css' });
  const plot = page.locator('.plot-panel');
  const shots: [string, () => Promise<void>][] = [
    ['plot-whole-linear.png', async () => undefined],
    ['plot-whole-log.png', async () => void (await page.locator('#y-log').check())],
    ['plot-interval-2-log.png', async () => void (await page.locator('#zoom-next').click())],
    ['plot-interval-2-linear.png', async () => void (await page.locator('#y-linear').check())],
    ['plot-steady-state.png', async () => void (await page.getByRole('button', { name: 'Steady state' }).click())],
  ];
  for (const [name, act] of shots) {
    try {
      await act();
      await page.waitForTimeout(300);
      await plot.screenshot({ path: join(out, name) });
    } catch (e) {
      say(name, e);
    }
  }
  await page.locator('#zoom-all').click();

  // Compare mode at 1440 px: keep the run, double the dose, run again; the figures panel.
  try {
    const wide = await browser.newPage({ viewport: { width: 1440, height: 900 } });
    await wide.goto(server.baseUrl);
    await wide.waitForFunction(() => window.__tidemark?.lastResult != null);
    await wide.getByTestId('keep-reference').click();
    const amount = wide.locator('[data-path="doses[0].amount"]');
    await amount.fill('800');
    await amount.press('Tab');
    await wide.getByTestId('run').click();
    await wide.waitForFunction(() => document.querySelector('table.intervals.compare') !== null);
    await wide.locator('.figures-panel').screenshot({ path: join(out, 'compare-1440-figures.png') });
    await wide.close();
  } catch (e) {
    say('compare-1440-figures.png', e);
  }

  await page.emulateMedia({ media: 'print' });
  await page.waitForTimeout(300);
  await page.screenshot({ path: join(out, 'print.png'), fullPage: true, scale: 'css' });
  writeFileSync(join(out, 'print.pdf'), await page.pdf({ format: 'A4', printBackground: true }));
  console.log(`screenshots in ${out}`);
} finally {
  await browser.close();
  await server.close();
}
