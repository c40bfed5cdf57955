/**
 * Streams one sheet of an XLSX workbook as records, the same shape as CSV records. The package is
 * read through its relationships (xlsx-structure.ts), so a workbook from any conforming writer
 * opens whatever it names its parts; the sheet's XML is parsed as it inflates, so memory does not
 * grow with the sheet. Cells become text in the form the CSV path reads: numbers with the chosen
 * decimal mark, dates as ISO date or date-time (in the workbook's date system), times as HH:MM:SS.
 *
 * exceljs's streaming reader is not used for reading: it finds sheets only under the part names
 * exceljs itself writes, takes the lowest sheetId for the first tab, needs every cell's address,
 * and keeps every shared string as a separate string without a limit.
 */
import { InputError, throwIfAborted } from '../errors.js';
import { isoDateFromDay } from '../store/days.js';
import type { CsvRecord } from './csv-tokenizer.js';
import { PART_LIMITS, WorkbookPackage } from './workbook-package.js';
import { readSharedStrings, type SharedStringTable } from './xlsx-shared-strings.js';
import { readDateStyles, readWorkbookStructure, type SheetTab } from './xlsx-structure.js';
import { decodeOoxmlEscapes, MAX_TOKEN_CHARS, XmlStream } from './xml-stream.js';

const BATCH_ROWS = 2000;
/** Excel's last column, XFD (ECMA-376 part 1 §18.3.1.4 allows no more, from memory). */
const MAX_COLUMNS = 16_384;

export interface XlsxSource {
  /** Record batches of the chosen sheet, header row first; `line` is the sheet's row number. */
  batches: AsyncGenerator<CsvRecord[]>;
  /** The workbook's worksheet names in tab order (known once the workbook part has been read). */
  sheetNames: () => string[];
  /** The name of the sheet being read, once found. */
  sheetName: () => string | undefined;
}

export interface XlsxOptions {
  sheet?: string;
  decimalComma: boolean;
  signal?: AbortSignal;
  onBytes?: (bytes: number) => void;
}

/** The tabs as a user sees them, for messages: `"About", "Receipts" (hidden), "Chart1" (chart)`. */
export function describeTabs(tabs: readonly SheetTab[]): string {
  if (tabs.length === 0) return '(none)';
  return tabs
    .map((tab) => `"${tab.name}"${tab.kind === 'chartsheet' ? ' (chart)' : tab.kind === 'other' ? ' (not a table)' : ''}${tab.hidden ? ' (hidden)' : ''}`)
    .join(', ');
}

/**
 * The sheet to read: the one named (exactly, else ignoring case as spreadsheet programs do), or
 * the first visible worksheet in tab order.
 */
export function chooseSheet(tabs: readonly SheetTab[], wanted: string | undefined): SheetTab {
  const worksheets = tabs.filter((tab) => tab.kind === 'worksheet');
  if (wanted === undefined) {
    const first = worksheets.find((tab) => !tab.hidden) ?? worksheets[0];
    if (!first) throw new InputError(`The workbook has no worksheet to read. Its tabs: ${describeTabs(tabs)}.`);
    return first;
  }
  const name = wanted.trim();
  const found = tabs.find((tab) => tab.name === name) ?? tabs.find((tab) => tab.name.toLowerCase() === name.toLowerCase());
  if (!found) throw new InputError(`The workbook has no sheet "${wanted}". Its sheets, in tab order: ${describeTabs(tabs)}; pass --sheet NAME.`);
  if (found.kind !== 'worksheet') throw new InputError(`The tab "${found.name}" is a chart, not a table of cells. Its sheets, in tab order: ${describeTabs(tabs)}.`);
  return found;
}

function pad(value: number, width = 2): string {
  return String(value).padStart(width, '0');
}

/** A number cell as text, with the chosen decimal mark (nine decimals at most: binary noise goes). */
export function numberText(value: number, decimalComma: boolean): string {
  const text = Number.isInteger(value) ? String(value) : String(Math.round(value * 1e9) / 1e9);
  return decimalComma ? text.replace('.', ',') : text;
}

/** Day number (days since 1970-01-01) of serial 0 in each date system. */
const SERIAL_EPOCH_1900 = -25_569; // 1899-12-30, for serials from 61 (1900-03-01) on
const SERIAL_EPOCH_1904 = -24_107; // 1904-01-01

/**
 * A date-styled number → `YYYY-MM-DD`, `YYYY-MM-DDTHH:MM:SS`, or `HH:MM:SS` for a time alone
 * (a serial below 1). The 1900 system counts a 29 February 1900 that never was (serial 60), as
 * Lotus 1-2-3 did, so serials before it are one day later than the plain count (from memory).
 */
export function excelSerialText(serial: number, date1904: boolean): string {
  let whole = Math.floor(serial);
  let seconds = Math.round((serial - whole) * 86_400);
  if (seconds === 86_400) {
    whole += 1;
    seconds = 0;
  }
  const time = `${pad(Math.floor(seconds / 3600))}:${pad(Math.floor(seconds / 60) % 60)}:${pad(seconds % 60)}`;
  if (whole === 0) return time;
  let date: string;
  if (date1904) date = isoDateFromDay(SERIAL_EPOCH_1904 + whole);
  else if (whole === 60) date = '1900-02-29';
  else date = isoDateFromDay(SERIAL_EPOCH_1900 + whole + (whole < 60 ? 1 : 0));
  return seconds === 0 ? date : `${date}T${time}`;
}

/** An ISO 8601 cell (`t="d"`) in the importer's form: date, or date and time to the second. */
function isoCellText(text: string): string {
  const trimmed = text.trim();
  if (/^\d{4}-\d{2}-\d{2}T00:00(:00(\.0+)?)?Z?$/.test(trimmed)) return trimmed.slice(0, 10);
  return /^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}:\d{2}/.test(trimmed) ? trimmed.slice(0, 19) : trimmed;
}

/** Column letters of a cell reference (`AB12`) → 0-based column; -1 when there are none. */
export function columnOfReference(reference: string): number {
  let column = 0;
  let index = 0;
  for (; index < reference.length; index += 1) {
    const code = reference.charCodeAt(index) | 0x20; // lower case
    if (code < 97 || code > 122) break;
    column = column * 26 + (code - 96);
    if (column > MAX_COLUMNS) return MAX_COLUMNS;
  }
  return index === 0 ? -1 : column - 1;
}

interface SheetContext {
  sharedStrings: SharedStringTable;
  dateStyles: boolean[];
  date1904: boolean;
  decimalComma: boolean;
  what: string;
}

/**
 * A sheet part's rows as records, built as its XML streams through. Formula cells give their
 * cached result; shared and inline strings their plain text; booleans yes/no (as consent reads
 * them); error cells their code (#N/A), which validation then rejects.
 */
class SheetRows {
  readonly xml: XmlStream;
  records: CsvRecord[] = [];
  private fields: string[] = [];
  private rowNumber = 0;
  private nextColumn = 0;
  private column = 0;
  private type = 'n';
  private style = 0;
  private value = '';
  private collecting = false;
  private inInline = false;
  private phoneticDepth = 0;
  done = false;

  constructor(private readonly context: SheetContext) {
    this.xml = new XmlStream(context.what, {
      open: (name, attributes) => this.open(name, attributes),
      close: (name) => this.close(name),
      text: (text) => {
        if (!this.collecting) return;
        this.value += text;
        if (this.value.length > MAX_TOKEN_CHARS) {
          throw new InputError(`${context.what}: a cell in row ${this.rowNumber} holds more than ${MAX_TOKEN_CHARS.toLocaleString('en-GB')} characters; no spreadsheet cell holds that much.`);
        }
      },
    });
  }

  private open(name: string, attributes: Record<string, string>): void {
    switch (name) {
      case 'row': {
        const number = attributes.r === undefined ? Number.NaN : Number(attributes.r);
        this.rowNumber = Number.isInteger(number) && number > 0 ? number : this.rowNumber + 1;
        this.fields = [];
        this.nextColumn = 0;
        break;
      }
      case 'c': {
        const column = attributes.r === undefined ? -1 : columnOfReference(attributes.r);
        this.column = column >= 0 ? column : this.nextColumn;
        if (this.column >= MAX_COLUMNS) {
          throw new InputError(`${this.context.what}: row ${this.rowNumber} has a cell beyond column XFD, the last a sheet can have.`);
        }
        this.type = attributes.t ?? 'n';
        this.style = attributes.s === undefined ? 0 : Number(attributes.s);
        this.value = '';
        break;
      }
      case 'v':
        this.collecting = true;
        break;
      case 'is':
        this.inInline = true;
        break;
      case 'rPh':
        this.phoneticDepth += 1;
        break;
      case 't':
        if (this.inInline && this.phoneticDepth === 0) this.collecting = true;
        break;
    }
  }

  private close(name: string): void {
    switch (name) {
      case 'v':
      case 't':
        this.collecting = false;
        break;
      case 'is':
        this.inInline = false;
        break;
      case 'rPh':
        this.phoneticDepth -= 1;
        break;
      case 'c': {
        const text = this.cellText();
        if (text !== '') {
          while (this.fields.length < this.column) this.fields.push('');
          this.fields[this.column] = text;
        }
        this.nextColumn = this.column + 1;
        break;
      }
      case 'row': {
        const fields = this.fields;
        while (fields.length > 0 && fields[fields.length - 1] === '') fields.pop();
        if (fields.length > 0) this.records.push({ fields, line: this.rowNumber });
        this.fields = [];
        break;
      }
      case 'sheetData':
        this.done = true;
        break;
    }
  }

  private cellText(): string {
    const { value, context } = this;
    switch (this.type) {
      case 's': {
        if (value === '') return '';
        const text = context.sharedStrings.get(Number(value));
        if (text === undefined) {
          throw new InputError(`${context.what}: row ${this.rowNumber} refers to shared string ${value}, which the workbook does not have (damaged file?).`);
        }
        return text;
      }
      case 'inlineStr':
        return decodeOoxmlEscapes(value);
      case 'str':
        return value;
      case 'b':
        return value === '' ? '' : value.trim() === '1' || value.trim() === 'true' ? 'yes' : 'no';
      case 'e':
        return value;
      case 'd':
        return isoCellText(value);
      default: {
        if (value === '') return '';
        const number = Number(value);
        if (!Number.isFinite(number)) return value;
        return context.dateStyles[this.style] ? excelSerialText(number, context.date1904) : numberText(number, context.decimalComma);
      }
    }
  }
}

/**
 * Opens the workbook (lazily, on the first batch), picks the sheet and streams its rows. The
 * first sheet is the first visible worksheet in tab order, or the one named.
 */
export function openXlsxSource(path: string, options: XlsxOptions): XlsxSource {
  let tabs: SheetTab[] = [];
  let chosen: string | undefined;

  async function* batches(): AsyncGenerator<CsvRecord[]> {
    const pkg = await WorkbookPackage.open(path);
    try {
      const structure = await readWorkbookStructure(pkg, path);
      tabs = structure.tabs;
      const tab = chooseSheet(tabs, options.sheet);
      if (tab.part === null || !pkg.has(tab.part)) {
        throw new InputError(`${path} is damaged: the sheet "${tab.name}" has no part in the package.`);
      }
      throwIfAborted(options.signal);
      const dateStyles = await readDateStyles(pkg, structure.stylesPart);
      const sharedStrings = await readSharedStrings(pkg, structure.sharedStringsPart, path);
      throwIfAborted(options.signal);
      chosen = tab.name;
      const rows = new SheetRows({ sharedStrings, dateStyles, date1904: structure.date1904, decimalComma: options.decimalComma, what: `The sheet "${tab.name}"` });
      const span = pkg.span(tab.part);
      const progress = (inflated: number) => options.onBytes?.(span.start + Math.round((span.compressed * inflated) / Math.max(1, span.inflated)));
      for await (const text of pkg.textChunks(tab.part, PART_LIMITS.worksheet, progress)) {
        rows.xml.write(text);
        if (rows.records.length >= BATCH_ROWS) {
          const batch = rows.records;
          rows.records = [];
          yield batch;
          throwIfAborted(options.signal);
        }
        if (rows.done) break;
      }
      if (!rows.done) rows.xml.close();
      if (rows.records.length > 0) yield rows.records;
    } catch (error) {
      if (error instanceof InputError || (error as Error).name === 'CancelledError') throw error;
      throw new InputError(`${path} could not be read as an XLSX workbook (damaged or truncated?): ${(error as Error).message}`);
    } finally {
      pkg.close();
    }
  }

  return {
    batches: batches(),
    sheetNames: () => tabs.filter((tab) => tab.kind === 'worksheet').map((tab) => tab.name),
    sheetName: () => chosen,
  };
}
