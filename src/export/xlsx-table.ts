/**
 * Writes one table (customers, review queue, movement) into as many worksheets as Excel's row
 * limit needs, through exceljs's streaming writer: header styled and frozen, auto-filter over
 * the table, widths set, and one shared style object per column so the number format is
 * resolved once per column instead of once per cell (a per-cell style object costs exceljs a
 * style lookup per cell; measured in test/bench/export-vs-bare-exceljs.ts).
 */
import type ExcelJS from 'exceljs';
import { startsLikeFormula } from './formula-safety.js';
import { numberFormats, type CellValue, type Column } from './columns.js';
import { quotedTextFormat, type FilterRange } from './xlsx-package-extras.js';
import { letZipCatchUp, rowsPerYield } from './zip-flow.js';

/** Excel's limit: rows per worksheet, the header included. */
export const excelMaxRows = 1_048_576;

export const headerStyle: Partial<ExcelJS.Style> = {
  font: { bold: true, color: { argb: 'FFFFFFFF' } },
  fill: { type: 'pattern', pattern: 'solid', fgColor: { argb: 'FF35556B' } },
  alignment: { vertical: 'middle', wrapText: true },
};

/** The style every cell of a column shares (by reference: exceljs caches styles per object). */
export function columnStyle(column: Column<never>): Partial<ExcelJS.Style> {
  const numFmt = numberFormats[column.kind];
  return numFmt === null ? {} : { numFmt };
}

/** A value as it goes into a cell: text as it is, non-finite numbers empty, dates as dates. */
export function cellValue(value: CellValue): CellValue {
  if (typeof value === 'string') return value;
  if (typeof value === 'number') return Number.isFinite(value) ? value : null;
  if (value instanceof Date) return Number.isNaN(value.getTime()) ? null : value;
  return null;
}

const quotedStyles = new WeakMap<Partial<ExcelJS.Style>, Partial<ExcelJS.Style>>();

/**
 * The style of a cell: its column's, or for formula-shaped text the same with the text format,
 * which marks it for the quote prefix (xlsx-package-extras.ts). One quoted style per base style
 * object, as exceljs resolves styles by object.
 */
export function cellStyle(value: CellValue, base: Partial<ExcelJS.Style>): Partial<ExcelJS.Style> {
  if (typeof value !== 'string' || !startsLikeFormula(value)) return base;
  let quoted = quotedStyles.get(base);
  if (quoted === undefined) {
    quoted = { ...base, numFmt: quotedTextFormat };
    quotedStyles.set(base, quoted);
  }
  return quoted;
}

/** 1 → A, 26 → Z, 27 → AA. */
export function columnLetters(column: number): string {
  let letters = '';
  for (let rest = column; rest > 0; rest = Math.floor((rest - 1) / 26)) letters = String.fromCharCode(65 + ((rest - 1) % 26)) + letters;
  return letters;
}

/** "Customers", then "Customers 2", "Customers 3", … */
export function continuationSheetName(baseName: string, part: number): string {
  return part === 1 ? baseName : `${baseName} ${part}`;
}

export interface TableOptions {
  /** Rows per sheet, header included (default Excel's limit). */
  rowsPerSheet?: number;
  /** Collects each sheet's auto-filter range, by sheet name, for the filter database names. */
  filters?: Map<string, FilterRange>;
  /** Stops a wait for the zip (a failed output never drains). */
  signal?: AbortSignal;
}

export class TableSheetWriter<Row> {
  readonly sheetNames: string[] = [];
  private sheet: ExcelJS.Worksheet | null = null;
  private rowsInSheet = 0;
  private readonly styles: Partial<ExcelJS.Style>[];
  private readonly dataRowsPerSheet: number;

  private readonly filters: Map<string, FilterRange>;
  private readonly signal: AbortSignal | undefined;

  constructor(
    private readonly workbook: ExcelJS.stream.xlsx.WorkbookWriter,
    private readonly baseName: string,
    private readonly columns: readonly Column<Row>[],
    options: TableOptions = {},
  ) {
    const rowsPerSheet = options.rowsPerSheet ?? excelMaxRows;
    this.filters = options.filters ?? new Map();
    this.signal = options.signal;
    if (!Number.isInteger(rowsPerSheet) || rowsPerSheet < 2 || rowsPerSheet > excelMaxRows) {
      throw new RangeError(`rowsPerSheet must be a whole number from 2 to ${excelMaxRows}; got ${rowsPerSheet}.`);
    }
    this.dataRowsPerSheet = rowsPerSheet - 1;
    this.styles = columns.map((column) => columnStyle(column as Column<never>));
  }

  /** Rows written to the current sheet (header excluded). */
  get rowsInCurrentSheet(): number {
    return this.rowsInSheet;
  }

  async add(row: Row): Promise<void> {
    if (this.sheet === null || this.rowsInSheet === this.dataRowsPerSheet) this.openSheet();
    const sheet = this.sheet as ExcelJS.Worksheet;
    const values = this.columns.map((column) => cellValue(column.value(row)));
    const written = sheet.addRow(values);
    for (let index = 0; index < this.styles.length; index++) written.getCell(index + 1).style = cellStyle(values[index], this.styles[index]);
    written.commit();
    this.rowsInSheet++;
    if (this.rowsInSheet % rowsPerYield === 0) await letZipCatchUp(sheet, this.signal);
  }

  /** Closes and commits the current sheet (an empty table still gets its header sheet); returns every sheet name. */
  finish(): string[] {
    this.closeTable();
    this.commitSheet();
    return this.sheetNames;
  }

  /** The open sheet, for lines written after the table (outside the auto-filter). */
  get currentSheet(): ExcelJS.Worksheet | null {
    return this.sheet;
  }

  private commitSheet(): void {
    const sheet = this.sheet;
    if (sheet === null) return;
    this.sheet = null;
    sheet.commit();
  }

  /** Fixes the auto-filter to the table written so far; call before any lines after the table. */
  closeTable(): void {
    if (this.sheet === null) this.openSheet();
    if (this.sheet === null) return;
    this.sheet.autoFilter = {
      from: { row: 1, column: 1 },
      to: { row: this.rowsInSheet + 1, column: this.columns.length },
    };
    const name = this.sheet.name;
    this.filters.set(name, { sheetIndex: this.sheet.id - 1, sheetName: name, range: `A1:${columnLetters(this.columns.length)}${this.rowsInSheet + 1}` });
  }

  private openSheet(): void {
    if (this.sheet !== null) {
      this.closeTable();
      this.commitSheet();
    }
    const name = continuationSheetName(this.baseName, this.sheetNames.length + 1);
    const sheet = this.workbook.addWorksheet(name, {
      views: [{ state: 'frozen', xSplit: 0, ySplit: 1, topLeftCell: 'A2', activeCell: 'A2' }],
    });
    sheet.columns = this.columns.map((column) => ({ width: column.width }));
    const header = sheet.addRow(this.columns.map((column) => cellValue(column.header)));
    header.eachCell((cell, column) => (cell.style = cellStyle(this.columns[column - 1].header, headerStyle)));
    header.commit();
    this.sheetNames.push(name);
    this.sheet = sheet;
    this.rowsInSheet = 0;
  }
}
