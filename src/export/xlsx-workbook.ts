/**
 * The labelled workbook of a run (DESIGN.md §8): Overview, Customers (split at Excel's row
 * limit), Review and Movement, written in that order through exceljs's streaming writer with
 * shared strings off. Each sheet is committed before the next is opened, because the zip takes
 * entries one after another and an open earlier sheet would hold every later one in memory.
 */
import ExcelJS from 'exceljs';
import type { Writable } from 'node:stream';
import { CancelledError, throwIfAborted } from '../errors.js';
import { cautions } from './cautions.js';
import { movementColumns, numberFormats, reviewColumns, customerColumns, type CellValue, type MovementRow } from './columns.js';
import { streamListedCustomers, type ExportPlan, type PassOptions } from './passes.js';
import { describeFilter, suppressedCount, type CampaignFilter } from './selection.js';
import type { ExportSource, ValueKind } from './source.js';
import { cellStyle, cellValue, headerStyle, TableSheetWriter } from './xlsx-table.js';
import { declarePackageExtras, type FilterRange } from './xlsx-package-extras.js';

export const sheetNames = { overview: 'Overview', customers: 'Customers', review: 'Review', movement: 'Movement' } as const;

export interface WorkbookJob extends PassOptions {
  source: ExportSource;
  filter: CampaignFilter;
  plan: ExportPlan;
  output: Writable;
  /** Rows per customer sheet, header included (Excel's limit unless a test wants smaller sheets). */
  rowsPerSheet?: number;
}

const kindStyles = new Map<ValueKind | 'none', Partial<ExcelJS.Style>>(
  (Object.keys(numberFormats) as ValueKind[]).map((kind) => [kind, numberFormats[kind] === null ? {} : { numFmt: numberFormats[kind] as string }]),
);
const titleStyle: Partial<ExcelJS.Style> = { font: { bold: true, size: 14 } };
const sectionStyle: Partial<ExcelJS.Style> = { font: { bold: true, size: 12 } };
const wrapStyle: Partial<ExcelJS.Style> = { alignment: { wrapText: true, vertical: 'top' } };
/** A sub-line's label is indented by the cell style, not by leading spaces (LibreOffice drops those). */
const indentStyle: Partial<ExcelJS.Style> = { alignment: { indent: 2 } };

/**
 * Adds one overview line; cell kinds give number formats, formula-shaped text is quote-prefixed
 * like every cell. `labelStyle` styles the first cell only (an indented sub-line).
 */
function addLine(
  sheet: ExcelJS.Worksheet,
  values: CellValue[],
  kinds: (ValueKind | undefined)[] = [],
  style?: Partial<ExcelJS.Style>,
  labelStyle?: Partial<ExcelJS.Style>,
): void {
  const cells = values.map(cellValue);
  const row = sheet.addRow(cells);
  cells.forEach((value, index) => {
    const cell = row.getCell(index + 1);
    const base = index === 0 && labelStyle ? labelStyle : (style ?? kindStyles.get(kinds[index] ?? 'text') ?? {});
    cell.style = cellStyle(value, base);
  });
  row.commit();
}

function addSection(sheet: ExcelJS.Worksheet, title: string): void {
  addLine(sheet, []);
  addLine(sheet, [title], [], sectionStyle);
}

function asDate(isoDate: string): Date {
  return new Date(`${isoDate}T00:00:00Z`);
}

function writeOverview(workbook: ExcelJS.stream.xlsx.WorkbookWriter, job: WorkbookJob): void {
  const { source, filter, plan } = job;
  const { header } = source;
  const sheet = workbook.addWorksheet(sheetNames.overview);
  sheet.columns = [{ width: 44 }, { width: 26 }, { width: 18 }, { width: 18 }, { width: 18 }, ...source.medianColumns.map(() => ({ width: 22 }))];

  addLine(sheet, [`Spendmix export — run ${header.runId}`], [], titleStyle);
  addSection(sheet, 'Run');
  addLine(sheet, ['Chain', header.chain ?? 'not recorded in the database']);
  if (header.database !== null) addLine(sheet, ['Database', header.database]);
  addLine(sheet, ['Run id', header.runId], [undefined, 'count']);
  addLine(sheet, ['Parent run', header.parentRunId ?? 'none (first run)'], [undefined, header.parentRunId === null ? 'text' : 'count']);
  addLine(sheet, ['Created', new Date(header.createdAt)], [undefined, 'datetime']);
  addLine(sheet, ['As-of date', asDate(header.asOf)], [undefined, 'date']);
  addLine(sheet, ['Window start', asDate(header.windowStart)], [undefined, 'date']);
  addLine(sheet, ['Window (months)', header.windowMonths], [undefined, 'count']);

  addSection(sheet, 'Features and transforms');
  for (const feature of header.features) addLine(sheet, [feature.label, feature.transform]);

  addSection(sheet, 'Model and settings');
  for (const entry of header.model) addLine(sheet, [entry.label, entry.value], [undefined, entry.kind]);

  addSection(sheet, 'Segments');
  const segmentHeader = ['Segment', 'Customers', 'Share of customers', 'Revenue (EUR)', 'Share of revenue', ...source.medianColumns.map((column) => `Median ${column.header}`)];
  addLine(sheet, segmentHeader, [], headerStyle);
  const segmentKinds: ValueKind[] = ['text', 'count', 'share', 'eur', 'share', ...source.medianColumns.map((column) => column.kind)];
  for (const segment of source.segments) {
    const medians = source.medianColumns.map((column) => segment.medians[column.key] ?? null);
    addLine(sheet, [segment.name, segment.customers, segment.share, segment.revenue, segment.revenueShare, ...medians], segmentKinds);
  }
  const sum = (pick: (segment: (typeof source.segments)[number]) => number) => source.segments.reduce((total, segment) => total + pick(segment), 0);
  addLine(sheet, ['All segments', sum((s) => s.customers), sum((s) => s.share), sum((s) => s.revenue), sum((s) => s.revenueShare)], segmentKinds);

  addSection(sheet, 'Customers in the run');
  const count = (label: string, value: number, labelStyle?: Partial<ExcelJS.Style>) => addLine(sheet, [label, value], [undefined, 'count'], undefined, labelStyle);
  count('Placed in a segment', header.counts.placed);
  count('Too new to place', header.counts.tooNew);
  count('Borderline', header.counts.borderline);
  count('Atypical', header.counts.atypical);

  addSection(sheet, 'This export');
  for (const line of describeFilter(filter)) addLine(sheet, [line.label, line.value]);
  count('Customers listed', plan.tally.listed);
  count('Suppressed: no marketing consent (refused or unknown)', suppressedCount(plan.tally));
  count('of which refused', plan.tally.noConsent, indentStyle);
  count('of which unknown', plan.tally.unknownConsent, indentStyle);
  count('Left out: excluded by review', plan.tally.excludedByReview);
  count('Left out: not in the chosen segments', plan.tally.otherSegment);
  count('Left out: below the minimum confidence', plan.tally.belowConfidence);
  count('Left out: reviewed customers', plan.tally.reviewedLeftOut);
  count('Review queue: listed on the Review sheet', plan.reviewListed.length);
  count('Review queue: suppressed (no or unknown consent)', plan.reviewSuppressed);

  if (header.warnings.length > 0) {
    addSection(sheet, 'Warnings');
    for (const warning of header.warnings) addLine(sheet, [warning], [], wrapStyle);
  }
  addSection(sheet, 'Cautions');
  for (const paragraph of cautions) addLine(sheet, [paragraph], [], wrapStyle);
  sheet.commit();
}

async function writeReview(workbook: ExcelJS.stream.xlsx.WorkbookWriter, job: WorkbookJob, filters: Map<string, FilterRange>): Promise<string[]> {
  const table = new TableSheetWriter(workbook, sheetNames.review, reviewColumns(), { filters, signal: job.signal });
  for (const row of job.plan.reviewListed) await table.add(row);
  return table.finish();
}

async function writeMovement(workbook: ExcelJS.stream.xlsx.WorkbookWriter, job: WorkbookJob, filters: Map<string, FilterRange>): Promise<string[]> {
  const { movement } = job.source;
  const table = new TableSheetWriter<MovementRow>(workbook, sheetNames.movement, movementColumns(movement?.currentSegments ?? []), { filters, signal: job.signal });
  if (movement !== null) {
    for (const [index, label] of movement.parentSegments.entries()) await table.add({ label, counts: movement.counts[index] ?? [] });
  }
  table.closeTable();
  const sheet = table.currentSheet as ExcelJS.Worksheet;
  const line = (values: CellValue[], kinds: (ValueKind | undefined)[] = []) => addLine(sheet, values, kinds);
  line([]);
  if (movement === null) {
    line(['No parent run: this is a first run, so there is no movement to show.']);
  } else {
    line(['Parent run', movement.parentRunId], [undefined, 'count']);
    line(['Customers in both runs', movement.common], [undefined, 'count']);
    line(['Entered (placed now, not in the parent run)', movement.entered], [undefined, 'count']);
    line(['Left (placed in the parent run, not now)', movement.left], [undefined, 'count']);
    line(['Stability (adjusted Rand index)', movement.adjustedRandIndex ?? 'not defined'], [undefined, 'probability']);
  }
  return table.finish();
}

/** The promise, or a CancelledError as soon as the signal fires. */
async function untilAborted<T>(promise: Promise<T>, signal: AbortSignal | undefined): Promise<T> {
  if (!signal) return promise;
  promise.catch(() => undefined); // its failure, if the signal won, is the signal's cause
  throwIfAborted(signal);
  let onAbort = () => {};
  const aborted = new Promise<never>((_, reject) => {
    onAbort = () => reject(new CancelledError());
    signal.addEventListener('abort', onAbort, { once: true });
  });
  try {
    return await Promise.race([promise, aborted]);
  } finally {
    signal.removeEventListener('abort', onAbort);
  }
}

/** Writes the whole workbook to `output`; resolves with the sheet names once the zip is complete. */
export async function writeWorkbook(job: WorkbookJob): Promise<string[]> {
  const workbook = new ExcelJS.stream.xlsx.WorkbookWriter({ stream: job.output, useSharedStrings: false, useStyles: true });
  workbook.creator = 'Spendmix';
  const filters = new Map<string, FilterRange>();
  const extras = declarePackageExtras(workbook, () => [...filters.values()]);
  const sheets: string[] = [sheetNames.overview];
  job.onProgress?.({ phase: 'overview', done: 0, total: 1, message: 'Writing the overview' });
  writeOverview(workbook, job);

  const customers = new TableSheetWriter(workbook, sheetNames.customers, customerColumns(job.source.customerFeatureColumns), {
    rowsPerSheet: job.rowsPerSheet,
    filters,
    signal: job.signal,
  });
  await streamListedCustomers(job.source, job.filter, job.plan, (row) => customers.add(row), job);
  sheets.push(...customers.finish());

  throwIfAborted(job.signal);
  job.onProgress?.({ phase: 'review', done: 0, total: job.plan.reviewListed.length, message: 'Writing the review sheet' });
  sheets.push(...(await writeReview(workbook, job, filters)));
  throwIfAborted(job.signal);
  job.onProgress?.({ phase: 'movement', done: 0, total: 1, message: 'Writing the movement sheet' });
  sheets.push(...(await writeMovement(workbook, job, filters)));

  throwIfAborted(job.signal);
  job.onProgress?.({ phase: 'finishing', done: 0, total: 1, message: 'Finishing the workbook' });
  // Resolves once the zip is finalised and the output stream has finished. A failed output (a full
  // disk) never finishes: the signal (fired by the failure) ends the wait instead.
  await untilAborted(workbook.commit(), job.signal);
  extras.verify();
  return sheets;
}
