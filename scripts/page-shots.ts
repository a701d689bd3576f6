/**
 * `npm run page:shots`: builds the page if needed, serves it on a free loopback port and
 * saves screenshots of the demo (whole page, log axis, steady-state zoom, print layout) into
 * tests/artifacts/page/ for a look by eye.
 */
import { mkdirSync } from 'node:fs';
import { join } from 'node:path';
import { ensureClientBuilt, launchChromium, repoRoot, startServer } from '../tests/browser/harness.ts';

const out = join(repoRoot, 'tests/artifacts/page');
mkdirSync(out, { recursive: true });
ensureClientBuilt();
const server = await startServer();
const browser = await launchChromium();
try {
  const page = await browser.newPage({ viewport: { width: 1280, height: 900 } });
  await page.goto(server.baseUrl);
  await page.waitForFunction(() => window.__tidemark?.lastResult !== null && window.__tidemark?.lastResult !== undefined);
  await page.screenshot({ path: join(out, 'demo.png'), fullPage: true });
  const shots: [string, () => Promise<void>][] = [
    ['log-axis.png', async () => void (await page.getByLabel('Log', { exact: true }).check())],
    ['steady-state.png', async () => void (await page.getByRole('button', { name: 'Steady state' }).click())],
  ];
  for (const [name, act] of shots) {
    try {
      await act();
      await page.waitForTimeout(400);
      await page.screenshot({ path: join(out, name), clip: { x: 590, y: 230, width: 690, height: 600 } });
    } catch (e) {
      console.error(`${name}: ${e instanceof Error ? e.message.split('\n')[0] : String(e)}`);
    }
  }
  await page.emulateMedia({ media: 'print' });
  await page.screenshot({ path: join(out, 'print.png'), fullPage: true });
  console.log(`screenshots in ${out}`);
} finally {
  await browser.close();
  await server.close();
}
