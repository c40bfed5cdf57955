/**
 * The two declarations added to exceljs's styles and workbook parts (xlsx-package-extras.ts), on
 * the part shapes ECMA-376 part 1 allows: with and without existing defined names, sheet names
 * that need quoting, and cell formats that already say something about quoting.
 */
import { describe, expect, it } from 'vitest';
import { addFilterDatabaseNames, addQuotePrefix, filterReference } from '../../src/export/xlsx-package-extras.js';

describe('filter database names', () => {
  const filter = { sheetIndex: 2, sheetName: "Bob's list", range: 'A1:AB12' };

  it("quote the sheet name (quotes doubled) and make the range absolute", () => {
    expect(filterReference(filter)).toBe("'Bob''s list'!$A$1:$AB$12");
  });

  it('go before calcPr when there are no defined names, and inside them when there are', () => {
    const name = `<definedName name="_xlnm._FilterDatabase" localSheetId="2" hidden="1">'Bob''s list'!$A$1:$AB$12</definedName>`;
    expect(addFilterDatabaseNames('<workbook><sheets/><calcPr calcId="1"/></workbook>', [filter])).toBe(`<workbook><sheets/><definedNames>${name}</definedNames><calcPr calcId="1"/></workbook>`);
    expect(addFilterDatabaseNames('<workbook><sheets/></workbook>', [filter])).toBe(`<workbook><sheets/><definedNames>${name}</definedNames></workbook>`);
    expect(addFilterDatabaseNames('<workbook><definedNames><definedName name="x">A</definedName></definedNames></workbook>', [filter])).toBe(
      `<workbook><definedNames><definedName name="x">A</definedName>${name}</definedNames></workbook>`,
    );
    expect(addFilterDatabaseNames('<workbook/>', [])).toBe('<workbook/>');
  });
});

describe('quote prefix on the text-format cell styles', () => {
  it('marks the cellXfs entries with number format 49 only, once', () => {
    const styles =
      '<styleSheet><cellStyleXfs><xf numFmtId="49"/></cellStyleXfs><cellXfs count="3"><xf numFmtId="0" fontId="0"/>' +
      '<xf numFmtId="49" fontId="1" applyNumberFormat="1"/><xf numFmtId="49" quotePrefix="1"/></cellXfs></styleSheet>';
    expect(addQuotePrefix(styles)).toBe(
      '<styleSheet><cellStyleXfs><xf numFmtId="49"/></cellStyleXfs><cellXfs count="3"><xf numFmtId="0" fontId="0"/>' +
        '<xf quotePrefix="1" numFmtId="49" fontId="1" applyNumberFormat="1"/><xf numFmtId="49" quotePrefix="1"/></cellXfs></styleSheet>',
    );
  });
});
