/**
 * Two declarations exceljs 4.4.0's streaming writer cannot make, added to the workbook's parts as
 * the writer hands them to its zip (it appends the styles and workbook parts whole, as text, at
 * commit):
 *
 * - the quote-prefix flag (`quotePrefix="1"`, ECMA-376 part 1 §18.8.45) on the cell style of
 *   formula-shaped text, so a spreadsheet program shows it as text and keeps it text when a user
 *   edits the cell. Those cells, and only those, carry the text number format `@` (built-in 49),
 *   which is how their style is found in the styles part;
 * - a hidden `_xlnm._FilterDatabase` name for each sheet's auto-filter range (§18.2.5), as Excel
 *   writes it: LibreOffice shows an auto-filter only with it.
 *
 * `verify()` after the commit fails the export if a part was not seen, so a later exceljs that
 * writes its parts differently stops the export instead of silently dropping either declaration.
 */
import type ExcelJS from 'exceljs';

/** The number format of formula-shaped text cells (built-in 49, "@"). */
export const quotedTextFormat = '@';
const quotedTextFormatId = 49;

export interface FilterRange {
  /** 0-based position of the sheet among the workbook's sheets (the name's localSheetId). */
  sheetIndex: number;
  sheetName: string;
  /** `A1:M401` */
  range: string;
}

interface ZipAppender {
  append: (source: unknown, data: { name: string }) => unknown;
}

function escapeXml(text: string): string {
  return text.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;');
}

/** `'Customers 2'!$A$1:$M$401`: the sheet name quoted (quotes doubled), the range absolute. */
export function filterReference(filter: FilterRange): string {
  const absolute = filter.range
    .split(':')
    .map((cell) => cell.replace(/^([A-Z]+)(\d+)$/, '$$$1$$$2'))
    .join(':');
  return `'${filter.sheetName.replace(/'/g, "''")}'!${absolute}`;
}

/** Adds `quotePrefix="1"` to the cell formats (cellXfs) that use the text number format. */
export function addQuotePrefix(stylesXml: string): string {
  return stylesXml.replace(/<cellXfs\b[\s\S]*?<\/cellXfs>/, (cellXfs) =>
    cellXfs.replace(new RegExp(`<xf\\b(?=[^>]*\\bnumFmtId="${quotedTextFormatId}")(?![^>]*\\bquotePrefix=)`, 'g'), '<xf quotePrefix="1"'),
  );
}

/** Adds the filter database names to the workbook part, inside its definedNames (made when missing). */
export function addFilterDatabaseNames(workbookXml: string, filters: readonly FilterRange[]): string {
  if (filters.length === 0) return workbookXml;
  const names = filters
    .map((filter) => `<definedName name="_xlnm._FilterDatabase" localSheetId="${filter.sheetIndex}" hidden="1">${escapeXml(filterReference(filter))}</definedName>`)
    .join('');
  if (workbookXml.includes('</definedNames>')) return workbookXml.replace('</definedNames>', `${names}</definedNames>`);
  if (/<definedNames\s*\/>/.test(workbookXml)) return workbookXml.replace(/<definedNames\s*\/>/, `<definedNames>${names}</definedNames>`);
  const at = workbookXml.search(/<calcPr\b|<\/workbook>/);
  return `${workbookXml.slice(0, at)}<definedNames>${names}</definedNames>${workbookXml.slice(at)}`;
}

/**
 * Hooks the writer's zip so the styles and workbook parts get the declarations above; the filter
 * ranges are read when the workbook part is written (at commit), so sheets may add them until then.
 */
export function declarePackageExtras(workbook: ExcelJS.stream.xlsx.WorkbookWriter, filters: () => readonly FilterRange[]): { verify: () => void } {
  const zip = (workbook as unknown as { zip?: ZipAppender }).zip;
  const seen = { styles: false, workbook: false };
  if (zip && typeof zip.append === 'function') {
    const append = zip.append.bind(zip);
    zip.append = (source, data) => {
      const name = data.name.replace(/^\//, '');
      if (typeof source === 'string' && name === 'xl/styles.xml') {
        seen.styles = true;
        return append(addQuotePrefix(source), data);
      }
      if (typeof source === 'string' && name === 'xl/workbook.xml') {
        seen.workbook = true;
        return append(addFilterDatabaseNames(source, filters()), data);
      }
      return append(source, data);
    };
  }
  return {
    verify: () => {
      if (!seen.styles || !seen.workbook) {
        throw new Error('The workbook writer did not hand over its styles and workbook parts as expected (exceljs changed?): the quote-prefix style and filter names could not be declared.');
      }
    },
  };
}
