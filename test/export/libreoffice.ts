/**
 * LibreOffice Calc as an independent reader of our exports, in a chosen locale: `soffice
 * --headless` opens the file (a CSV with the given separator, its numbers read as that locale
 * reads them) and saves it as XLSX, which openpyxl then reads (read_workbook.py). What LibreOffice
 * took for a number, a date, a formula or text is then plain to see.
 *
 * The locale is set in a fresh user profile per locale (`ooSetupSystemLocale`, the "Locale
 * setting" of Tools > Options > Language Settings), so a German profile reads `19.025` as nineteen
 * thousand and twenty-five, as a user's LibreOffice in Germany does.
 */
import { spawnSync } from 'node:child_process';
import { parse } from 'csv-parse/sync';
import { copyFileSync, existsSync, mkdirSync, mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { basename, extname, join } from 'node:path';
import { readWorkbook, sheet, type ReadCell, type ReadSheet, type ReadWorkbook } from './independent-readers.js';

export type OfficeLocale = 'en-US' | 'de-DE';

export function libreOfficeVersion(): string | null {
  const result = spawnSync('soffice', ['--version'], { encoding: 'utf8' });
  return result.status === 0 ? (/LibreOffice \S+/.exec(result.stdout)?.[0] ?? null) : null;
}

const profiles = new Map<OfficeLocale, string>();

function profileFor(locale: OfficeLocale): string {
  let folder = profiles.get(locale);
  if (folder === undefined) {
    folder = mkdtempSync(join(tmpdir(), `spendmix-lo-${locale}-`));
    mkdirSync(join(folder, 'user'));
    const setting = (name: string) =>
      `<item oor:path="/org.openoffice.Setup/L10N"><prop oor:name="${name}" oor:op="fuse"><value>${locale}</value></prop></item>`;
    writeFileSync(
      join(folder, 'user', 'registrymodifications.xcu'),
      '<?xml version="1.0" encoding="UTF-8"?>\n<oor:items xmlns:oor="http://openoffice.org/2001/registry" xmlns:xs="http://www.w3.org/2001/XMLSchema" xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance">' +
        `${setting('ooSetupSystemLocale')}${setting('ooLocale')}</oor:items>\n`,
    );
    profiles.set(locale, folder);
  }
  return folder;
}

/**
 * Opens `file` in LibreOffice with the locale's settings and reads what it made of it. CSV files
 * are opened with the given separator, `"` for quotes, UTF-8 and every column "Standard" (the
 * import filter's options; the language token is left empty so the locale decides numbers).
 */
export function readWithLibreOffice(file: string, locale: OfficeLocale, csvSeparator?: ',' | ';'): ReadWorkbook {
  const work = mkdtempSync(join(tmpdir(), 'spendmix-lo-read-'));
  const input = join(work, `input${extname(file)}`);
  copyFileSync(file, input);
  const outDir = join(work, 'out');
  const args = [`-env:UserInstallation=file://${profileFor(locale)}`, '--headless', '--norestore'];
  if (csvSeparator) args.push(`--infilter=CSV:${csvSeparator.charCodeAt(0)},34,76,1`);
  args.push('--convert-to', 'xlsx:Calc MS Excel 2007 XML', '--outdir', outDir, input);
  const result = spawnSync('soffice', args, { encoding: 'utf8', timeout: 120_000 });
  const converted = join(outDir, `${basename(input, extname(input))}.xlsx`);
  if (result.status !== 0 || !existsSync(converted)) {
    throw new Error(`LibreOffice could not convert ${file} (${result.status}): ${result.stderr} ${result.stdout}`);
  }
  return readWorkbook(converted);
}

/** Equal as LibreOffice keeps numbers: to 15 significant digits. */
export function sameNumber(ours: number, theirs: number): boolean {
  return ours === theirs || Math.abs(ours - theirs) <= 1e-14 * Math.abs(ours);
}

export interface Comparison {
  numbers: number;
  texts: number;
  mismatches: string[];
}

/** Every cell of our sheets against LibreOffice's reading of them. */
export function compareWorkbooks(ours: ReadWorkbook, theirs: ReadWorkbook): Comparison {
  const result: Comparison = { numbers: 0, texts: 0, mismatches: [] };
  for (const mine of ours.sheets) {
    const other = sheet(theirs, mine.name);
    (mine.rows ?? []).forEach((row, r) =>
      row.forEach((cell, c) => {
        const seen: ReadCell = other.rows?.[r]?.[c] ?? { v: null, t: 'n', f: 'General' };
        const where = `${mine.name}!R${r + 1}C${c + 1}`;
        if (typeof cell.v === 'number') {
          result.numbers += 1;
          if (typeof seen.v !== 'number' || !sameNumber(cell.v, seen.v)) result.mismatches.push(`${where}: ${cell.v} read as ${JSON.stringify(seen.v)}`);
        } else if (cell.t === 'd') {
          if (seen.t !== 'd' || String(seen.v).slice(0, 19) !== String(cell.v).slice(0, 19)) result.mismatches.push(`${where}: date ${cell.v} read as ${JSON.stringify(seen.v)}`);
        } else if (cell.v !== null) {
          result.texts += 1;
          if (seen.t !== 's' || seen.v !== cell.v) result.mismatches.push(`${where}: text ${JSON.stringify(cell.v)} read as ${JSON.stringify(seen.v)} (${seen.t})`);
        }
      }),
    );
  }
  return result;
}

/** Every field of a CSV list against LibreOffice's reading of it: numbers as numbers, exactly. */
export function compareCsv(path: string, separator: ',' | ';', theirs: ReadSheet): Comparison {
  const records = parse(readFileSync(path, 'utf8'), { bom: true, delimiter: separator }) as string[][];
  const number = separator === ';' ? /^-?\d+(,\d+)?$/ : /^-?\d+(\.\d+)?$/;
  const result: Comparison = { numbers: 0, texts: 0, mismatches: [] };
  records.forEach((record, r) =>
    record.forEach((field, c) => {
      const seen = theirs.rows?.[r]?.[c] ?? { v: null, t: 'n', f: 'General' };
      const where = `R${r + 1}C${c + 1}`;
      if (field === '') {
        if (seen.v !== null) result.mismatches.push(`${where}: empty read as ${JSON.stringify(seen.v)}`);
      } else if (number.test(field)) {
        result.numbers += 1;
        if (seen.v !== Number(field.replace(',', '.'))) result.mismatches.push(`${where}: ${field} read as ${JSON.stringify(seen.v)}`);
      } else {
        result.texts += 1;
        if (seen.t !== 's' || seen.v !== field) result.mismatches.push(`${where}: text ${JSON.stringify(field)} read as ${JSON.stringify(seen.v)} (${seen.t})`);
      }
    }),
  );
  return result;
}
