import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { jsonText, terminalText } from '../src/cli/run-command.js';
import { sampleDir } from './runs/demo-database.js';

/**
 * What the CLI echoes from input files reaches a terminal: control bytes (ESC starts sequences
 * that retitle, recolour or clear the screen, CR overwrites a line) and invisible format
 * characters are written as visible escapes in human output; --json stays JSON with the same
 * values. A binary file given as receipts is the crafted input.
 */

const projectRoot = fileURLToPath(new URL('..', import.meta.url));
const folder = mkdtempSync(join(tmpdir(), 'spendmix-terminal-'));

function cli(...args: string[]) {
  const run = spawnSync(process.execPath, [join(projectRoot, 'src/cli/bin.mjs'), ...args], { cwd: folder, encoding: 'latin1', timeout: 120_000 });
  return { code: run.status, stdout: run.stdout, stderr: run.stderr };
}

/** Bytes a terminal would act on: C0 controls but tab and newline, DEL, and UTF-8-encoded C1 controls (C2 80–9F). */
const RAW_CONTROL = /[\x00-\x08\x0b-\x1f\x7f]|\xc2[\x80-\x9f]/;

/** A file of pseudo-random bytes 1–255 (no NUL, so it is not refused as binary at once). */
function binaryFile(name: string): string {
  const bytes = Buffer.alloc(3000);
  let state = 7;
  for (let i = 0; i < bytes.length; i++) {
    state = (Math.imul(state, 1103515245) + 12345) >>> 0;
    bytes[i] = 1 + ((state >>> 16) % 255);
  }
  const path = join(folder, name);
  writeFileSync(path, bytes);
  return path;
}

describe('text from input files on the terminal', () => {
  it('escapes control and format characters for people, keeps newlines and tabs, and keeps JSON values', () => {
    expect(terminalText('a\x1b]0;title\x07b\x1b[2Jc\rd\te\nf\u009bg\u202eh\u0000')).toBe('a\\x1b]0;title\\x07b\\x1b[2Jc\\x0dd\te\nf\\x9bg\\u{202e}h\\x00');
    const value = { cell: 'x\x1b[31m\u0085\u2028\u202e\x7f' };
    const json = jsonText(value);
    expect(json).toBe('{"cell":"x\\u001b[31m\\u0085\\u2028\\u202e\\u007f"}');
    expect(JSON.parse(json)).toEqual(value);
    expect(json).not.toMatch(/[\x00-\x1f\x7f-\x9f\u2028\u202e]/);
  });

  it('a binary file given as receipts: the refusal shows its bytes escaped, exit 2', () => {
    const receipts = binaryFile('not-receipts.csv');
    // Read as Windows-1252, so the bytes reach the header check (as UTF-8 the file is refused before).
    const human = cli('import', '--db', join(folder, 'a.db'), '--receipts', receipts, '--encoding', 'windows-1252');
    expect(human.code).toBe(2);
    expect(human.stderr).toMatch(/^spendmix: The receipts file lacks required columns/);
    expect(human.stderr).not.toMatch(RAW_CONTROL);
    expect(human.stderr).toMatch(/\\x[01][0-9a-f]/);
    expect(human.stdout).toBe('');

    const json = cli('import', '--db', join(folder, 'a.db'), '--receipts', receipts, '--encoding', 'windows-1252', '--json');
    expect(json.code).toBe(2);
    expect(json.stdout).toBe('');
    expect(json.stderr).not.toMatch(RAW_CONTROL);
    const details = JSON.parse(Buffer.from(json.stderr.split('\n')[1], 'latin1').toString('utf8')) as { error: string };
    expect(details.error).toMatch(/lacks required columns/);
  }, 120_000);

  it('a file whose name carries escape sequences: the report escapes it, --json keeps it exactly', () => {
    const name = 'march\x1b[2J\x1b]0;owned\x07.csv';
    const path = join(folder, name);
    writeFileSync(path, readFileSync(join(sampleDir, 'receipts.csv')));
    const human = cli('import', '--db', join(folder, 'b.db'), '--receipts', path);
    expect(human.code, human.stderr).toBe(0);
    expect(human.stdout).not.toMatch(RAW_CONTROL);
    expect(human.stdout).toContain('march\\x1b[2J\\x1b]0;owned\\x07.csv');
    const json = cli('import', '--db', join(folder, 'c.db'), '--receipts', path, '--json');
    expect(json.code, json.stderr).toBe(0);
    expect(json.stdout).not.toMatch(RAW_CONTROL);
    expect((JSON.parse(json.stdout) as { file: string }).file).toContain(name);
  }, 120_000);
});
