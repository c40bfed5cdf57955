import { readFile } from 'node:fs/promises';
import { InputError } from '../errors.js';
import { tokenizeCsv } from '../ingest/csv-tokenizer.js';
import type { ApiParsedInput, ImportReportPage } from './contract.js';

/** One page of an import's rejection report (line, column, value, reason), for the Sources screen. */
export async function importReportPage(reportPath: string | null, input: ApiParsedInput<'importReport'>): Promise<ImportReportPage> {
  if (!reportPath) return { importId: input.importId, total: 0, rows: [] };
  let text: string;
  try {
    text = await readFile(reportPath, 'utf8');
  } catch (error) {
    throw new InputError(`The report of import ${input.importId} (${reportPath}) cannot be read: ${(error as Error).message}`);
  }
  const body = tokenizeCsv(text).slice(1).filter((record) => record.fields.length >= 4);
  return {
    importId: input.importId,
    total: body.length,
    rows: body.slice(input.offset, input.offset + input.limit).map(({ fields: [line, column, value, reason] }) => ({
      line: Number(line),
      column,
      // The report neutralises formula-like text with a leading apostrophe; show the value as read.
      value: /^'[=+\-@\t\r]/.test(value) ? value.slice(1) : value,
      reason,
    })),
  };
}
