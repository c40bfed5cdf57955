/**
 * The XLSX reader on hand-made packages: how parts are found (ECMA-376 part 2, Open Packaging
 * Conventions), how cells become text (part 1, SpreadsheetML), and how damaged or hostile
 * packages are refused with an InputError rather than a crash.
 */
import { randomBytes } from 'node:crypto';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { InputError } from '../../src/errors.js';
import { columnOfReference, excelSerialText, openXlsxSource } from '../../src/ingest/xlsx-reader.js';
import { isDateFormatCode, resolvePartName } from '../../src/ingest/xlsx-structure.js';
import { sharedStringsBomb, writePackage } from './crafted-workbooks.js';
import { temporaryFolder } from './support.js';

const MAIN = 'http://schemas.openxmlformats.org/spreadsheetml/2006/main';
const REL = 'http://schemas.openxmlformats.org/officeDocument/2006/relationships';
const PKG = 'http://schemas.openxmlformats.org/package/2006/relationships';

interface BookParts {
  /** `<sheet>` elements of the workbook part, in tab order. */
  sheets: string;
  /** `<Relationship>` elements of the workbook's relationships part. */
  relationships: string;
  /** Other parts by zip name. */
  parts: Record<string, string | Buffer>;
  workbookAttributes?: string;
  workbookPr?: string;
}

function book(spec: BookParts): string {
  const path = join(temporaryFolder('spendmix-xlsx-'), 'book.xlsx');
  return writePackage(path, {
    '[Content_Types].xml': '<Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types"/>',
    '_rels/.rels': `<Relationships xmlns="${PKG}"><Relationship Id="rId1" Type="${REL}/officeDocument" Target="xl/workbook.xml"/></Relationships>`,
    'xl/workbook.xml': `<workbook xmlns="${MAIN}" ${spec.workbookAttributes ?? `xmlns:r="${REL}"`}>${spec.workbookPr ?? ''}<sheets>${spec.sheets}</sheets></workbook>`,
    'xl/_rels/workbook.xml.rels': `<Relationships xmlns="${PKG}">${spec.relationships}</Relationships>`,
    ...spec.parts,
  });
}

function sheetXml(rows: string): string {
  return `<?xml version="1.0" encoding="UTF-8"?><worksheet xmlns="${MAIN}"><sheetData>${rows}</sheetData></worksheet>`;
}

function oneSheet(rows: string, parts: Record<string, string | Buffer> = {}): string {
  return book({
    sheets: '<sheet name="Data" sheetId="1" r:id="rId1"/>',
    relationships:
      `<Relationship Id="rId1" Type="${REL}/worksheet" Target="worksheets/sheet1.xml"/>` +
      `<Relationship Id="rId2" Type="${REL}/sharedStrings" Target="sharedStrings.xml"/>` +
      `<Relationship Id="rId3" Type="${REL}/styles" Target="styles.xml"/>`,
    parts: { 'xl/worksheets/sheet1.xml': sheetXml(rows), ...parts },
  });
}

const STYLES =
  `<styleSheet xmlns="${MAIN}"><numFmts count="1"><numFmt numFmtId="164" formatCode="yyyy\\-mm\\-dd\\ hh:mm"/></numFmts>` +
  '<cellXfs count="4"><xf numFmtId="0"/><xf numFmtId="14"/><xf numFmtId="164"/><xf numFmtId="4"/></cellXfs></styleSheet>';

async function read(path: string, options: { sheet?: string; decimalComma?: boolean } = {}): Promise<{ fields: string[]; line: number }[]> {
  const source = openXlsxSource(path, { sheet: options.sheet, decimalComma: options.decimalComma ?? false });
  const records: { fields: string[]; line: number }[] = [];
  for await (const batch of source.batches) for (const record of batch) records.push({ fields: record.fields, line: record.line });
  return records;
}

async function refusal(path: string, options: { sheet?: string } = {}): Promise<string> {
  try {
    await read(path, options);
  } catch (error) {
    expect(error).toBeInstanceOf(InputError);
    return (error as Error).message;
  }
  throw new Error('expected the workbook to be refused');
}

describe('part names and relationship targets (OPC)', () => {
  it('resolves relative, dotted, absolute and query-suffixed targets to absolute part names', () => {
    expect(resolvePartName('/xl/workbook.xml', 'worksheets/sheet1.xml')).toBe('/xl/worksheets/sheet1.xml');
    expect(resolvePartName('/xl/workbook.xml', '/xl/worksheets/sheet1.xml')).toBe('/xl/worksheets/sheet1.xml');
    expect(resolvePartName('/xl/workbook.xml', '../xl/./tabs/a%20b.xml')).toBe('/xl/tabs/a%20b.xml');
    expect(resolvePartName('/', 'xl/workbook.xml')).toBe('/xl/workbook.xml');
    expect(resolvePartName('/xl/workbook.xml', 'sheet.xml#fragment')).toBe('/xl/sheet.xml');
  });

  it('finds the workbook wherever the package relationships put it, and the sheets by any name', async () => {
    const path = writePackage(join(temporaryFolder('spendmix-xlsx-'), 'odd.xlsx'), {
      '_rels/.rels': `<Relationships xmlns="${PKG}"><Relationship Id="a" Type="${REL}/officeDocument" Target="/book/main part.xml"/></Relationships>`,
      'book/main part.xml': `<workbook xmlns="${MAIN}" xmlns:rel="${REL}"><sheets><sheet name="Only" sheetId="5" rel:id="x"/></sheets></workbook>`,
      'book/_rels/main part.xml.rels': `<Relationships xmlns="${PKG}"><Relationship Id="x" Type="${REL}/worksheet" Target="../data/%E2%82%AC.xml"/></Relationships>`,
      'data/€.xml': sheetXml('<row r="1"><c r="A1" t="inlineStr"><is><t>found</t></is></c></row>'),
    });
    expect(await read(path)).toEqual([{ fields: ['found'], line: 1 }]);
  });

  it('reads strict OOXML namespaces and prefixed elements (x:row, x:c)', async () => {
    const strictRel = 'http://purl.oclc.org/ooxml/officeDocument/relationships';
    const path = writePackage(join(temporaryFolder('spendmix-xlsx-'), 'strict.xlsx'), {
      '_rels/.rels': `<Relationships xmlns="${PKG}"><Relationship Id="r1" Type="${strictRel}/officeDocument" Target="xl/workbook.xml"/></Relationships>`,
      'xl/workbook.xml': `<x:workbook xmlns:x="http://purl.oclc.org/ooxml/spreadsheetml/main" xmlns:r="${strictRel}"><x:sheets><x:sheet name="S" sheetId="1" r:id="r9"/></x:sheets></x:workbook>`,
      'xl/_rels/workbook.xml.rels': `<Relationships xmlns="${PKG}"><Relationship Id="r9" Type="${strictRel}/worksheet" Target="sheet.xml"/></Relationships>`,
      'xl/sheet.xml': '<x:worksheet xmlns:x="http://purl.oclc.org/ooxml/spreadsheetml/main"><x:sheetData><x:row><x:c><x:v>7</x:v></x:c></x:row></x:sheetData></x:worksheet>',
    });
    expect(await read(path)).toEqual([{ fields: ['7'], line: 1 }]);
  });

  it('takes the first visible worksheet by default, lists hidden and chart tabs as such, and refuses a chart', async () => {
    const path = book({
      sheets:
        '<sheet name="Secret" sheetId="1" state="hidden" r:id="rId1"/><sheet name="Chart1" sheetId="2" r:id="rId2"/><sheet name="Data" sheetId="3" r:id="rId3"/>',
      relationships:
        `<Relationship Id="rId1" Type="${REL}/worksheet" Target="worksheets/a.xml"/>` +
        `<Relationship Id="rId2" Type="${REL}/chartsheet" Target="chartsheets/c.xml"/>` +
        `<Relationship Id="rId3" Type="${REL}/worksheet" Target="worksheets/b.xml"/>`,
      parts: {
        'xl/worksheets/a.xml': sheetXml('<row r="1"><c r="A1"><v>1</v></c></row>'),
        'xl/chartsheets/c.xml': '<chartsheet/>',
        'xl/worksheets/b.xml': sheetXml('<row r="1"><c r="A1"><v>2</v></c></row>'),
      },
    });
    expect(await read(path)).toEqual([{ fields: ['2'], line: 1 }]);
    expect(await read(path, { sheet: 'secret' })).toEqual([{ fields: ['1'], line: 1 }]);
    expect(await refusal(path, { sheet: 'Chart1' })).toBe(
      'The tab "Chart1" is a chart, not a table of cells. Its sheets, in tab order: "Secret" (hidden), "Chart1" (chart), "Data".',
    );
    expect(await refusal(path, { sheet: 'Nope' })).toContain('Its sheets, in tab order: "Secret" (hidden), "Chart1" (chart), "Data"; pass --sheet NAME.');
  });

  it('refuses a zip without a workbook, and a workbook whose sheet part is missing', async () => {
    const notBook = writePackage(join(temporaryFolder('spendmix-xlsx-'), 'doc.xlsx'), { 'word/document.xml': '<document/>' });
    expect(await refusal(notBook)).toMatch(/holds no workbook/);
    const missing = book({ sheets: '<sheet name="Data" sheetId="1" r:id="rId1"/>', relationships: `<Relationship Id="rId1" Type="${REL}/worksheet" Target="gone.xml"/>`, parts: {} });
    expect(await refusal(missing)).toMatch(/the sheet "Data" has no part in the package/);
  });
});

describe('cells to text', () => {
  it('numbers, dates in the 1900 system (with its phantom 29 February), date-times and times alone', () => {
    // Expected dates recorded with openpyxl.utils.datetime.from_excel (Debian's python3-openpyxl 3.0.9).
    expect(excelSerialText(1, false)).toBe('1900-01-01');
    expect(excelSerialText(59, false)).toBe('1900-02-28');
    expect(excelSerialText(61, false)).toBe('1900-03-01');
    expect(excelSerialText(45658, false)).toBe('2025-01-01');
    expect(excelSerialText(45658.5, false)).toBe('2025-01-01T12:00:00');
    expect(excelSerialText(46356.6875, false)).toBe('2026-11-30T16:30:00');
    expect(excelSerialText(45658.999999999, false)).toBe('2025-01-02');
    expect(excelSerialText(0.75, false)).toBe('18:00:00');
    expect(excelSerialText(1, true)).toBe('1904-01-02');
    expect(excelSerialText(44196, true)).toBe('2025-01-01');
  });

  it('tells date formats from number formats', () => {
    for (const code of ['yyyy-mm-dd', 'dd/mm/yyyy hh:mm', '[h]:mm:ss', '[$-409]mmm d, yyyy', 'hh:mm AM/PM', 'yyyy\\-mm\\-dd']) expect(isDateFormatCode(code), code).toBe(true);
    for (const code of ['General', '0.00', '#,##0.00 "EUR"', '0.00E+00', '[Red]0.00', '"Day "0', '_(* #,##0_);_(* (#,##0)', '0%', '@']) expect(isDateFormatCode(code), code).toBe(false);
  });

  it('column letters to positions, up to XFD', () => {
    expect([columnOfReference('A1'), columnOfReference('z9'), columnOfReference('AA1'), columnOfReference('XFD1048576'), columnOfReference('12')]).toEqual([0, 25, 26, 16383, -1]);
  });

  it('reads every cell type: shared (rich, phonetic left out, _x escapes), inline, boolean, error, ISO date, formula results, styles', async () => {
    const path = oneSheet(
      '<row r="1"><c r="A1" t="s"><v>0</v></c><c r="B1" t="s"><v>1</v></c><c r="C1" t="inlineStr"><is><r><t>in</t></r><r><t xml:space="preserve">line </t></r><rPh><t>x</t></rPh></is></c>' +
        '<c r="D1" t="b"><v>1</v></c><c r="E1" t="b"><v>0</v></c><c r="F1" t="e"><v>#N/A</v></c></row>' +
        '<row r="3"><c r="B3" t="d"><v>2026-01-05T00:00:00Z</v></c><c r="C3" t="d"><v>2026-01-05T08:30:15.000</v></c><c r="D3"><f>1+2</f><v>3</v></c>' +
        '<c r="E3" t="str"><f>"a"&amp;"b"</f><v>ab</v></c><c r="F3" s="1"><v>45658</v></c><c r="G3" s="2"><v>45658.25</v></c><c r="H3" s="3"><v>1234.5</v></c><c r="I3"><v>0.1</v></c></row>',
      {
        'xl/sharedStrings.xml': `<sst xmlns="${MAIN}"><si><t>Caf&#233; &amp; co</t></si><si><r><t>two</t></r><r><rPr><b/></rPr><t>_x000D_parts</t></r><rPh sb="0" eb="1"><t>ignored</t></rPh></si></sst>`,
        'xl/styles.xml': STYLES,
      },
    );
    expect(await read(path)).toEqual([
      { fields: ['Café & co', 'two\rparts', 'inline ', 'yes', 'no', '#N/A'], line: 1 },
      { fields: ['', '2026-01-05', '2026-01-05T08:30:15', '3', 'ab', '2025-01-01', '2025-01-01T06:00:00', '1234.5', '0.1'], line: 3 },
    ]);
    expect((await read(path, { decimalComma: true }))[1].fields[7]).toBe('1234,5');
  });

  it('places cells without addresses in order, and rows without numbers after the one before', async () => {
    const path = oneSheet('<row><c><v>1</v></c><c><v>2</v></c></row><row r="5"><c r="C5"><v>3</v></c><c><v>4</v></c></row><row><c><v>5</v></c></row>');
    expect(await read(path)).toEqual([
      { fields: ['1', '2'], line: 1 },
      { fields: ['', '', '3', '4'], line: 5 },
      { fields: ['5'], line: 6 },
    ]);
  });

  it('reads a sheet part written in UTF-16 with its byte-order mark', async () => {
    const text = sheetXml('<row r="1"><c r="A1" t="inlineStr"><is><t>Zoë €</t></is></c></row>').replace('UTF-8', 'UTF-16');
    const path = oneSheet('', { 'xl/worksheets/sheet1.xml': Buffer.concat([Buffer.from([0xff, 0xfe]), Buffer.from(text, 'utf16le')]) });
    expect(await read(path)).toEqual([{ fields: ['Zoë €'], line: 1 }]);
  });
});

describe('damaged and hostile packages are refused, not crashed on', () => {
  it('a sheet that is not well-formed XML, and one that defines entities (no expansion)', async () => {
    expect(await refusal(oneSheet('<row><c><v>1</v></row>'))).toMatch(/is not well-formed XML/);
    const laughs = `<?xml version="1.0"?><!DOCTYPE w [<!ENTITY a "aaaaaaaaaa"><!ENTITY b "&a;&a;&a;&a;&a;&a;&a;&a;&a;&a;">]><worksheet xmlns="${MAIN}"><sheetData><row><c t="inlineStr"><is><t>&b;</t></is></c></row></sheetData></worksheet>`;
    expect(await refusal(oneSheet('', { 'xl/worksheets/sheet1.xml': laughs }))).toMatch(/is not well-formed XML/);
  });

  it('a cell beyond column XFD, and a reference to a shared string that is not there', async () => {
    expect(await refusal(oneSheet('<row r="1"><c r="XFE1"><v>1</v></c></row>'))).toMatch(/beyond column XFD/);
    expect(await refusal(oneSheet('<row r="1"><c r="A1" t="s"><v>7</v></c></row>', { 'xl/sharedStrings.xml': `<sst xmlns="${MAIN}"><si><t>a</t></si></sst>` }))).toMatch(
      /refers to shared string 7, which the workbook does not have/,
    );
  });

  it('one value longer than any cell (incompressible, so only the token limit catches it)', async () => {
    const long = randomBytes(1_200_000).toString('base64');
    const message = await refusal(oneSheet(`<row r="1"><c r="A1" t="inlineStr"><is><t>${long}</t></is></c></row>`));
    expect(message).toMatch(/holds a single value or tag longer than 1,048,576 characters/);
  });

  it('a package whose directory understates a part: reading stops at the stated size', async () => {
    const path = join(temporaryFolder('spendmix-xlsx-'), 'lying.xlsx');
    sharedStringsBomb(path, 200e6, 1_000_000);
    expect(await refusal(path)).toMatch(/the workbook part "\/xl\/sharedStrings.xml" is damaged: too many bytes in the stream/);
  });

  it('a file that is not a zip at all', async () => {
    const path = writePackage(join(temporaryFolder('spendmix-xlsx-'), 'x.xlsx'), {});
    const { writeFileSync } = await import('node:fs');
    writeFileSync(path, Buffer.concat([Buffer.from('PK\u0003\u0004'), randomBytes(200)]));
    expect(await refusal(path)).toMatch(/could not be read as an XLSX workbook \(damaged or truncated\?\)/);
  });
});
