/**
 * Time to generate the demo chain (6,000 customers by default) beside a reference in the same
 * run: writing the same number of bytes of CSV with a plain loop (one fixed-shape receipt line
 * per row with a counter, written the way the generator writes: 64 KiB pieces with writeSync).
 *
 *   npx tsx test/bench/demo-generator.ts [customers] [repeats]
 *
 * Runs reference and generator alternately `repeats` times (default 3) and prints the best of
 * each, the ratio generator / reference, and the bytes written.
 */
import { closeSync, mkdtempSync, openSync, readdirSync, rmSync, statSync, writeSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { DEFAULT_DEMO_SEED } from '../../src/api/contract.js';
import { generateDemoChain } from '../../src/demo/index.js';

const customers = Number(process.argv[2] ?? 6000);
const repeats = Number(process.argv[3] ?? 3);
const scratch = mkdtempSync(join(tmpdir(), 'spendmix-bench-demo-'));

function folderBytes(folder: string): number {
  return readdirSync(folder).reduce((total, name) => total + statSync(join(folder, name)).size, 0);
}

async function generate(run: number): Promise<{ seconds: number; bytes: number; receipts: number; rows: number }> {
  const outDir = join(scratch, `demo-${run}`);
  const started = performance.now();
  const result = await generateDemoChain({ outDir, customers, seed: DEFAULT_DEMO_SEED });
  const seconds = (performance.now() - started) / 1000;
  const bytes = folderBytes(outDir);
  rmSync(outDir, { recursive: true });
  return { seconds, bytes, receipts: result.receipts, rows: result.receiptRows + result.visits };
}

function plainLoop(bytes: number): number {
  const path = join(scratch, 'plain.csv');
  const started = performance.now();
  const descriptor = openSync(path, 'w');
  let chunk = '';
  let written = 0;
  for (let row = 0; written < bytes; row++) {
    const line = `R${String(row).padStart(7, '0')},C${String(row % customers).padStart(5, '0')},S01,2025-03-14T17:42:00,fresh,12.34\n`;
    chunk += line;
    written += line.length;
    if (chunk.length >= 1 << 16) {
      writeSync(descriptor, chunk);
      chunk = '';
    }
  }
  writeSync(descriptor, chunk);
  closeSync(descriptor);
  const seconds = (performance.now() - started) / 1000;
  rmSync(path);
  return seconds;
}

const first = await generate(0); // also tells the reference how many bytes to write
let bestGenerator = first.seconds;
let bestReference = Infinity;
for (let run = 1; run <= repeats; run++) {
  bestReference = Math.min(bestReference, plainLoop(first.bytes));
  bestGenerator = Math.min(bestGenerator, (await generate(run)).seconds);
}
rmSync(scratch, { recursive: true });

const mb = (first.bytes / 1e6).toFixed(1);
process.stdout.write(
  [
    `demo chain, ${customers} customers: ${first.receipts} receipts, ${first.rows} receipt and visit rows, ${mb} MB`,
    `generator (best of ${repeats + 1}):          ${bestGenerator.toFixed(2)} s`,
    `plain loop writing ${mb} MB (best of ${repeats}): ${bestReference.toFixed(2)} s`,
    `ratio generator / plain loop: ${(bestGenerator / bestReference).toFixed(2)}`,
    '',
  ].join('\n'),
);
