import ExcelJS from 'exceljs';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { defaultModelFeatures } from '../../src/api/contract.js';
import { designScreens } from '../support/design-reference.js';
import { collectPageErrors, openBrowser, screenshot, serve, type ServedApp } from './harness.js';

/**
 * The analyst's month, end to end in Chromium through the browser host (`spendmix serve`): load
 * the demo chain into a fresh database, import one more receipts file with a bad row and read
 * its report, run two refits, regroup the components at another level and back, open every
 * screen, move a Certainty threshold, decide on two review items, accept the rest of the flagged
 * customers beyond the review capacity, rename a segment, export and read the workbook back. Every wait is on visible
 * state; no console or page errors are allowed. Screenshots go to test-artifacts/.
 */

// A small chain keeps the CI run short (DESIGN.md's default is 6,000 customers).
const DEMO_CUSTOMERS = 1500;
const taskTimeout = 240_000;

/** Waits until a task panel has finished, and fails with its message unless it finished well. */
async function waitForTask(page: Page, testId: string): Promise<void> {
  const panel = page.locator(`[data-testid="${testId}"][data-state]`);
  await panel.waitFor({ state: 'visible', timeout: taskTimeout });
  const state = await panel.getAttribute('data-state');
  if (state !== 'done') throw new Error(`${testId} ended as ${state}: ${await panel.innerText()}`);
}

async function openScreen(page: Page, id: string): Promise<void> {
  await page.getByTestId(`nav-${id}`).click();
  await page.getByTestId(`screen-${id}`).waitFor({ state: 'visible' });
}

/** A receipts file for November 2026 with one row whose date cannot be read. */
function extraReceipts(folder: string): { path: string; badLine: number; rows: number } {
  const lines = ['receipt_id,customer_id,store_id,date,category,amount'];
  let badLine = 0;
  for (let i = 1; i <= 40; i++) {
    const customer = `C${String(i).padStart(5, '0')}`;
    const date = i === 17 ? '2026-13-45T10:00:00' : `2026-11-${String(1 + (i % 28)).padStart(2, '0')}T${String(8 + (i % 10)).padStart(2, '0')}:15:00`;
    if (i === 17) badLine = lines.length + 1;
    lines.push(`X${i},${customer},S01,${date},fresh,${(12 + i * 1.37).toFixed(2)}`);
  }
  const path = join(folder, 'late-november-receipts.csv');
  writeFileSync(path, `${lines.join('\n')}\n`);
  return { path, badLine, rows: 40 };
}

async function runRefit(page: Page, asOf: string, reviewCapacity = 200): Promise<void> {
  await openScreen(page, 'model');
  const dismiss = page.getByTestId('model-task-dismiss');
  if (await dismiss.isVisible()) await dismiss.click();
  await page.getByTestId('model-as-of').fill(asOf);
  await page.getByTestId('model-mode').selectOption('refit');
  await page.getByTestId('model-k-mode').selectOption('auto');
  await page.getByTestId('model-k-min').fill('2');
  await page.getByTestId('model-k-max').fill('4');
  await page.getByTestId('model-covariance').selectOption('full');
  await page.getByTestId('model-restarts').fill('2');
  await page.getByTestId('model-segment-mode').selectOption('auto');
  await page.getByTestId('model-review-capacity').fill(String(reviewCapacity));
  const runsBefore = await page.getByTestId('run-picker').locator('option:not([value=""])').count();
  await page.getByTestId('model-start').click();
  // A finished run shows up in the run picker (the Model screen then shows the new run's
  // settings); a failed one leaves its message in the task panel.
  const failed = page.locator('[data-testid="model-task"][data-state="failed"]');
  await expect
    .poll(async () => {
      if (await failed.count()) throw new Error(`the run failed: ${await failed.innerText()}`);
      return page.getByTestId('run-picker').locator('option:not([value=""])').count();
    }, { timeout: taskTimeout, interval: 500 })
    .toBe(runsBefore + 1);
}

describe('Spendmix in Chromium through the browser host', () => {
  let folder: string;
  let app: ServedApp;
  let browser: Awaited<ReturnType<typeof openBrowser>>;
  let page: Page;
  let errors: string[];

  beforeAll(async () => {
    folder = mkdtempSync(join(tmpdir(), 'spendmix-e2e-'));
    app = await serve(join(folder, 'fresh.db'), ['--demo-customers', String(DEMO_CUSTOMERS)]);
    browser = await openBrowser();
    page = browser.page;
    errors = collectPageErrors(page);
    await page.goto(app.url);
    await page.getByTestId('app-shell').waitFor({ state: 'visible' });
  });

  afterAll(async () => {
    await browser?.close();
    await app?.stop();
  });

  it('takes the session token out of the address bar', () => {
    expect(page.url()).not.toContain('token=');
  });

  it('shows the screens of DESIGN.md §9 in the side rail, in order, and each opens', async () => {
    const rail = page.locator('[data-testid^="nav-"]');
    expect((await rail.locator('.rail-title').allInnerTexts()).map((text) => text.trim())).toEqual([...designScreens]);
    for (const title of designScreens) {
      const item = rail.filter({ has: page.locator('.rail-title', { hasText: new RegExp(`^${title}$`) }) });
      await item.click();
      await expect.poll(() => item.getAttribute('aria-current')).toBe('page');
    }
  });

  it('loads the demo chain into the fresh database', async () => {
    await openScreen(page, 'sources');
    await screenshot(page, '01-sources-empty');
    await page.getByTestId('demo-load').click();
    await waitForTask(page, 'demo-task');
    await expect.poll(() => page.getByTestId('database-summary').innerText()).toMatch(/1,500/);
    await expect.poll(() => page.getByTestId('import-history').innerText()).toMatch(/receipts\.csv/);
  });

  it('imports a receipts file with a bad row and shows its rejection report', async () => {
    const file = extraReceipts(folder);
    await page.getByTestId('import-kind').selectOption('receipts');
    await page.getByTestId('file-input').setInputFiles(file.path);
    await page.getByTestId('preview-panel').waitFor({ state: 'visible' });
    expect(await page.getByTestId('preview-missing').count()).toBe(0);
    // The preview already shows the unreadable date as a problem.
    await expect.poll(() => page.getByTestId('preview-rows').innerText()).toMatch(/date/);
    await screenshot(page, '02-sources-preview');
    await page.getByTestId('import-start').click();
    await waitForTask(page, 'import-task');
    const result = await page.getByTestId('import-result').innerText();
    expect(result).toMatch(/Read 40 rows: 39 imported, 1 rejected/);
    await page.getByTestId('import-open-report').click();
    const report = page.getByTestId('report-table');
    await report.waitFor({ state: 'visible' });
    await expect.poll(() => report.innerText()).toContain('2026-13-45');
    expect(await report.innerText()).toContain(String(file.badLine));
    await screenshot(page, '03-sources-report');
  });

  it('offers log(1 + x) or the cube root as one step: the gaps since the last visit take the cube root by default', async () => {
    await openScreen(page, 'model');
    const toggle = (step: string) => page.getByTestId(`model-transform-gaps_since_last_visit-${step}`);
    await expect.poll(() => toggle('cubeRoot').isChecked()).toBe(true);
    expect(await toggle('log1p').isChecked()).toBe(false);
    expect(await page.getByTestId('model-transform-visits_per_month-log1p').isChecked()).toBe(true);
    await toggle('log1p').check();
    expect(await toggle('cubeRoot').isChecked()).toBe(false);
    await toggle('cubeRoot').check();
    expect(await toggle('log1p').isChecked()).toBe(false);
    expect(await toggle('cubeRoot').isChecked()).toBe(true);
  });

  it('runs two monthly refits and shows the information-criterion chart', async () => {
    await runRefit(page, '2026-10-31');
    await page.getByTestId('model-criterion-chart').waitFor({ state: 'visible' });
    // A small review capacity, so that some flagged customers are counted but left out of the queue.
    await runRefit(page, '2026-11-30', 10);
    await expect.poll(() => page.getByTestId('run-picker').locator('option:not([value=""])').count()).toBe(2);
    await screenshot(page, '04-model');
  });

  it('regroups the run at another level of the combining tree, then back to the automatic choice', async () => {
    const caption = page.getByTestId('combining-caption');
    await expect.poll(() => caption.innerText(), { timeout: 30_000 }).toMatch(/combined into \d+ segments?: chosen where the entropy curve flattens/);
    const [, components, automatic] = /^(\d+) components?.*into (\d+) segments?/.exec(await caption.innerText())!.map(Number) as number[];
    // Another level: one fewer segment (a merge, whose segment comes back on return) when there is
    // more than one, else one more.
    const level = automatic > 1 ? automatic - 1 : automatic + 1;
    expect(level).toBeLessThanOrEqual(components);
    expect(level).toBeGreaterThanOrEqual(1);
    await page.getByTestId('level-select').selectOption(String(level));
    await page.getByTestId('level-apply').click();
    await waitForTask(page, 'regroup-task');
    await expect.poll(() => page.getByTestId('regroup-result').innerText()).toMatch(new RegExp(`now ${level} segments?`));
    await expect.poll(() => caption.innerText()).toMatch(new RegExp(`into ${level} segments?: a level picked by hand`));
    expect(await page.getByTestId('combining-segments').locator('tbody tr').count()).toBe(level);
    // The run picker re-reads the run list: it says how many segments the run has now.
    await expect.poll(() => page.getByTestId('run-picker').locator('option:checked').innerText()).toContain(`${level} segment`);
    await screenshot(page, '04b-model-regrouped');
    await page.getByTestId('regroup-task-dismiss').click();
    await page.getByTestId('level-auto').click();
    await waitForTask(page, 'regroup-task');
    await expect.poll(() => caption.innerText()).toMatch(new RegExp(`into ${automatic} segments?: chosen where the entropy curve flattens`));
    // The segment the merge took away is back with its key and name (same components as before).
    if (level < automatic) await expect.poll(() => page.getByTestId('regroup-result').innerText()).toMatch(/Back with their earlier key and name: \S/);
    await screenshot(page, '04c-model-back');
    await page.getByTestId('regroup-task-dismiss').click();
  });

  it('paints the Segments screen and renames a segment in place', async () => {
    await openScreen(page, 'segments');
    await page.locator('[data-testid="screen-segments"][data-painted="true"]').waitFor({ timeout: 60_000 });
    await expect.poll(() => page.getByTestId('scatter-caption').innerText()).toMatch(/\d/);
    await screenshot(page, '05-segments');
    await page.getByTestId('segment-rename-1').click();
    await page.getByTestId('segment-rename-input').fill('Weekly big baskets');
    await page.getByTestId('segment-rename-save').click();
    await expect.poll(() => page.getByTestId('segment-name-1').innerText()).toBe('Weekly big baskets');
  });

  it('updates the Certainty counts when a threshold moves', async () => {
    await openScreen(page, 'certainty');
    const count = page.getByTestId('count-borderline');
    await expect.poll(() => count.innerText()).toMatch(/^\d[\d,]*$/);
    const before = await count.innerText();
    await page.getByTestId('certainty-histogram').waitFor({ state: 'visible' });
    await page.getByTestId('slider-borderline-confidence').fill('0.95');
    await expect.poll(() => count.innerText(), { timeout: 30_000 }).not.toBe(before);
    const after = Number((await count.innerText()).replace(/,/g, ''));
    expect(after).toBeGreaterThan(Number(before.replace(/,/g, '')));
    await screenshot(page, '06-certainty');
  });

  it('decides on two review items and counts them as done', async () => {
    await openScreen(page, 'review');
    const progress = page.getByTestId('review-progress');
    await expect.poll(() => progress.innerText()).toMatch(/^0 of \d/);
    const rows = page.locator('[data-testid^="review-row-"]');
    await rows.first().waitFor({ state: 'visible' });
    await rows.first().click();
    await page.getByTestId('review-detail').waitFor({ state: 'visible' });
    await page.getByTestId('review-note').fill('Catering orders, keep as is');
    await page.getByTestId('review-keep').click();
    await expect.poll(() => progress.innerText()).toMatch(/^1 of \d/);
    await rows.nth(1).click();
    await page.getByTestId('review-exclude').click();
    await expect.poll(() => progress.innerText()).toMatch(/^2 of \d/);
    await expect.poll(() => page.locator('[data-testid^="review-row-"].is-done').count()).toBe(2);
    await screenshot(page, '07-review');
  });

  it('says how many flagged customers were left out of the queue, and accepts the rest', async () => {
    const counts = page.getByTestId('queue-counts');
    await expect.poll(() => counts.innerText()).toMatch(/^Queue: 10 of [\d,]+ flagged \(capacity 10\)\.$/);
    const flagged = Number(/of ([\d,]+) flagged/.exec(await counts.innerText())![1].replace(/,/g, ''));
    const leftOut = flagged - 10;
    expect(leftOut).toBeGreaterThan(0);
    expect(await page.getByTestId('queue-left-out').innerText()).toMatch(new RegExp(`^${leftOut.toLocaleString('en-US')} counted, not queued: .*(borderline|atypical).* worth less than`));
    await page.getByTestId('review-scope').selectOption('unqueued');
    const progress = page.getByTestId('review-progress');
    await expect.poll(() => progress.innerText()).toBe(`0 of ${leftOut.toLocaleString('en-US')} done`);
    await page.getByTestId('queue-accept-rest').click();
    await expect.poll(() => page.getByTestId('queue-accepted').innerText()).toBe(`Kept ${leftOut.toLocaleString('en-US')} in the model's segment.`);
    await expect.poll(() => progress.innerText()).toBe(`${leftOut.toLocaleString('en-US')} of ${leftOut.toLocaleString('en-US')} done`);
    expect(await page.getByTestId('queue-accept-rest').isDisabled()).toBe(true);
    // The queue itself is untouched: the two decisions made there, nothing more.
    await page.getByTestId('review-scope').selectOption('queued');
    await expect.poll(() => progress.innerText()).toBe('2 of 10 done');
    await screenshot(page, '07b-review-rest-accepted');
  });

  it('shows the movement since last month', async () => {
    await openScreen(page, 'movement');
    await page.getByTestId('movement-heatmap').waitFor({ state: 'visible' });
    await expect.poll(() => page.getByTestId('movement-stability').innerText()).toMatch(/\d/);
    await screenshot(page, '08-movement');
  });

  it('exports the run and the workbook reads back with the counts the screen shows', async () => {
    await openScreen(page, 'export');
    await page.getByTestId('export-cautions').waitFor({ state: 'visible' });
    // In the browser the export is a download: the host writes it into its session folder and
    // serves it once; the screen starts the download when the export is written.
    await page.getByTestId('export-path').fill('november-campaign.xlsx');
    const download = page.waitForEvent('download', { timeout: taskTimeout });
    await page.getByTestId('export-start').click();
    await waitForTask(page, 'export-task');
    const saved = await download;
    expect(saved.suggestedFilename()).toBe('november-campaign.xlsx');
    const out = join(folder, 'downloaded-campaign.xlsx');
    await saved.saveAs(out);
    await expect.poll(() => page.getByTestId('export-download').getAttribute('data-state')).toBe('saved');
    await screenshot(page, '09-export');
    const exported = Number((await page.getByTestId('export-count-exported').innerText()).replace(/,/g, ''));
    const suppressed = Number((await page.getByTestId('export-count-suppressed').innerText()).replace(/,/g, ''));
    expect(exported).toBeGreaterThan(0);
    expect(suppressed).toBeGreaterThan(0);

    const workbook = new ExcelJS.Workbook();
    await workbook.xlsx.readFile(out);
    const names = workbook.worksheets.map((sheet) => sheet.name);
    expect(names[0]).toBe('Overview');
    expect(names).toEqual(expect.arrayContaining(['Customers', 'Review', 'Movement']));
    const listed = workbook.worksheets
      .filter((sheet) => sheet.name.startsWith('Customers'))
      .reduce((sum, sheet) => sum + sheet.actualRowCount - 1, 0);
    expect(listed).toBe(exported);
    // The renamed segment carries its new name into the workbook.
    const overviewText = JSON.stringify(workbook.getWorksheet('Overview')!.getSheetValues());
    expect(overviewText).toContain('Weekly big baskets');
  });

  it("writes the run's scoring query for the chain's own engine: shown, copied and downloaded as the API writes it", async () => {
    await openScreen(page, 'export');
    const section = page.getByTestId('model-sql');
    await section.scrollIntoViewIfNeeded();
    // A table name that is not a plain identifier is refused with the reason. The API answers a
    // refusal with HTTP 400, which Chromium logs once as a failed resource; that one line is expected.
    const errorsBefore = errors.length;
    await page.getByTestId('model-sql-table').fill('features; DROP TABLE receipts');
    await page.getByTestId('model-sql-show').click();
    await expect
      .poll(() => page.getByTestId('model-sql-error').innerText())
      .toMatch(/^Please check:\s+The features table "features; DROP TABLE receipts" is not a plain table name/);
    await expect.poll(() => errors.slice(errorsBefore)).toEqual(['console error: Failed to load resource: the server responded with a status of 400 (Bad Request)']);
    errors.splice(errorsBefore, 1);
    await page.getByTestId('model-sql-dialect').selectOption('postgres');
    await page.getByTestId('model-sql-table').fill('crm.november_features');
    await page.getByTestId('model-sql-show').click();
    const query = page.getByTestId('model-sql-query');
    await query.waitFor({ state: 'visible' });
    const sql = (await query.textContent()) ?? '';
    const runId = Number(/^-- Spendmix scoring query of run (\d+), postgres dialect/.exec(sql)?.[1]);
    expect(runId).toBeGreaterThan(0);
    expect(sql).toContain('FROM crm.november_features');
    expect(sql).toContain('AS MATERIALIZED');
    // The note names what the table needs: customer_id and the run's features (the defaults here), as the query reads them.
    const needs = await page.getByTestId('model-sql-needs').innerText();
    expect(needs).not.toContain('spend_per_month');
    for (const feature of defaultModelFeatures) {
      expect(needs).toContain(feature);
      expect(sql).toContain(`"${feature}"`);
    }
    expect(needs).toContain('customer_id');

    await browser.context.grantPermissions(['clipboard-read', 'clipboard-write'], { origin: new URL(app.url).origin });
    await page.getByTestId('model-sql-copy').click();
    await expect.poll(() => page.getByTestId('model-sql-copied').innerText()).toBe('Copied to the clipboard.');
    expect(await page.evaluate('navigator.clipboard.readText()')).toBe(sql);

    const download = page.waitForEvent('download', { timeout: taskTimeout });
    await page.getByTestId('model-sql-save').click();
    const saved = await download;
    expect(saved.suggestedFilename()).toBe(`spendmix-run-${runId}-postgres.sql`);
    const out = join(folder, 'score.sql');
    await saved.saveAs(out);
    expect(readFileSync(out, 'utf8')).toBe(sql);
    await expect.poll(() => page.getByTestId('model-sql-saved').getAttribute('data-state')).toBe('saved');
    await screenshot(page, '10-export-sql');
  });

  it('had no page errors and no console errors', () => {
    expect(errors, app.stderr()).toEqual([]);
  });
});
