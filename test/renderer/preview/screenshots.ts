/**
 * Takes a screenshot of every screen in Chromium, for a person to look at.
 *
 *   npm run -s screenshots                                  # the screens over the fake core
 *   npm run -s screenshots -- --url URL                     # a running `spendmix serve` address
 *
 * PNGs go to test-artifacts/screens/ (not committed). Page errors and console errors are
 * printed; the exit code is 1 when there were any.
 */
import { mkdirSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { createServer } from 'vite';
import { collectPageErrors, openBrowser } from '../../e2e/harness.js';

const root = fileURLToPath(new URL('../../..', import.meta.url));
const outDir = join(root, 'test-artifacts', 'screens');
mkdirSync(outDir, { recursive: true });

const urlFlag = process.argv.indexOf('--url');
let url = urlFlag >= 0 ? process.argv[urlFlag + 1] : null;
let closeServer: (() => Promise<void>) | null = null;
if (!url) {
  const server = await createServer({ configFile: join(root, 'test/renderer/preview/vite.config.ts'), server: { port: 0 } });
  await server.listen();
  url = server.resolvedUrls?.local[0] ?? null;
  if (!url) throw new Error('The preview server did not report its address.');
  closeServer = () => server.close();
}

const browser = await openBrowser();
const page = browser.page;
const problems = collectPageErrors(page);

/** A screen to open (`nav`, default `id`), optionally a button to press there (`press`), and what shows it is ready. */
const screens: { id: string; nav?: string; press?: string; ready: string }[] = [
  { id: 'sources', ready: '[data-testid="import-history"]' },
  { id: 'model', ready: '[data-testid="model-criterion-chart"], [data-testid="model-start"]' },
  { id: 'segments', ready: '[data-testid="screen-segments"][data-painted="true"]' },
  { id: 'certainty', ready: '[data-testid="certainty-histogram"]' },
  { id: 'review', ready: '[data-testid="review-detail"] h2' },
  { id: 'movement', ready: '[data-testid="movement-heatmap"], [data-testid="movement-no-parent"]' },
  { id: 'export', ready: '[data-testid="export-start"]' },
  { id: 'export-sql', nav: 'export', press: '[data-testid="model-sql-show"]', ready: '[data-testid="model-sql-query"]' },
];

await page.goto(url);
await page.waitForSelector('[data-testid="app-shell"]');
for (const screen of screens) {
  await page.click(`[data-testid="nav-${screen.nav ?? screen.id}"]`);
  if (screen.press) await page.click(screen.press);
  await page.waitForSelector(screen.ready, { timeout: 60_000 });
  if (screen.id === 'segments') {
    // A renamed segment shows its trait-built default name under the analyst's name.
    await page.click('[data-testid="segment-rename-2"]');
    await page.fill('[data-testid="segment-rename-input"]', 'Weekday regulars');
    await page.click('[data-testid="segment-rename-save"]');
    await page.waitForSelector('[data-testid="segment-default-name-2"]');
  }
  await page.waitForTimeout(400);
  const file = join(outDir, `${screen.id}.png`);
  await page.screenshot({ path: file, fullPage: true });
  console.log(`saved ${file}`);
  if (screen.id === 'review') {
    // The next queued customer is only atypical: the detail gives the extreme features instead of the borderline sentence.
    await page.keyboard.press('j');
    await page.waitForSelector('[data-testid="review-atypical-why"]', { timeout: 10_000 });
    const atypical = join(outDir, 'review-atypical.png');
    await page.screenshot({ path: atypical, fullPage: true });
    console.log(`saved ${atypical}`);
  }
}

// The Export screen once more with the CSV choices open (dialect, raw ids and its warning).
await page.selectOption('[data-testid="export-format"]', 'csv');
await page.selectOption('[data-testid="export-csv-dialect"]', 'semicolon');
await page.check('[data-testid="export-csv-raw-ids"]');
await page.waitForSelector('[data-testid="export-csv-raw-ids-warning"]');
const csvFile = join(outDir, 'export-csv.png');
await page.screenshot({ path: csvFile, fullPage: true });
console.log(`saved ${csvFile}`);

await browser.close();
await closeServer?.();
for (const problem of problems) console.error(problem);
process.exit(problems.length ? 1 : 0);
