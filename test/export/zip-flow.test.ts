/**
 * The streaming writer's flow control reads exceljs 4.4.0 internals (see src/export/zip-flow.ts).
 * This checks they are still there, so an exceljs upgrade that moves them fails here instead of
 * silently bringing back a workbook held whole in memory.
 */
import { PassThrough } from 'node:stream';
import ExcelJS from 'exceljs';
import { describe, expect, it } from 'vitest';
import { letZipCatchUp, queuedSheetBytes } from '../../src/export/zip-flow.js';

describe('zip flow control', () => {
  it('sees the XML queued in front of the deflater, and waits until it drains below the high water', async () => {
    const sink = new PassThrough();
    sink.resume();
    const workbook = new ExcelJS.stream.xlsx.WorkbookWriter({ stream: sink, useSharedStrings: false });
    const sheet = workbook.addWorksheet('Rows');
    // Without yielding, rows pile up in front of the deflater (about 0.2 KB each here).
    for (let index = 0; index < 60_000; index++) sheet.addRow([`C${index}`, 'Tier 2', index / 7, 0.5]).commit();
    const piled = queuedSheetBytes(sheet);
    expect(piled).toBeGreaterThan(8 * 1024 * 1024);
    await letZipCatchUp(sheet);
    expect(queuedSheetBytes(sheet)).toBeLessThanOrEqual(2 * 1024 * 1024);
    sheet.commit();
    await workbook.commit();
  });

  it('reads 0 from anything without the internals', () => {
    expect(queuedSheetBytes({})).toBe(0);
    expect(queuedSheetBytes({ _stream: { pipes: [] } })).toBe(0);
  });
});
