/**
 * Benchmark: 1,000,000 customers exported to XLSX by Spendmix's writer, against a bare exceljs
 * streaming write of the same number of rows × 12 columns of the same kinds (text ids and
 * segment names, probabilities, money), measured in the same command. Target (DESIGN.md §11):
 * at most 1.3 × the bare write's time, peak memory under 1 GB.
 *
 * Each measurement runs in its own child process, so peak resident memory (Linux VmHWM) belongs
 * to one writer alone; the order is reference, export, export, reference so drift on this shared
 * machine falls on both sides. Both sides generate their rows on the fly from the same seeded
 * stream (pure-rand), so neither pays for holding a million rows.
 *
 *   npx tsx test/bench/export-vs-bare-exceljs.ts [--rows N] [--rounds R]
 */
import { execFileSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import ExcelJS from 'exceljs';
import { exportSource } from '../../src/export/export-run.js';
import type { ExportCustomerRow, ExportSource } from '../../src/export/source.js';
import { restartStream } from '../../src/model/random.js';
import { defaultFeatureColumns, inventedRunHeader } from '../export/memory-source.js';

const segmentNames = ['Tier 1 — highest spend', 'Tier 2', 'Tier 3', 'Tier 4 — lowest spend'];

function argument(name: string, fallback: number): number {
  const index = process.argv.indexOf(name);
  return index >= 0 ? Number(process.argv[index + 1]) : fallback;
}

/** The same seeded customer stream for both sides. */
function* syntheticCustomers(rows: number): Generator<ExportCustomerRow> {
  const random = restartStream(2026, 0);
  for (let index = 0; index < rows; index++) {
    const segment = random.integer(0, 3);
    const confidence = 0.4 + 0.6 * random.float();
    const spend = 20 + 400 * random.float();
    yield {
      customerId: `C${String(index).padStart(7, '0')}`,
      finalSegmentName: segmentNames[segment],
      modelSegmentName: segmentNames[segment],
      confidence,
      secondSegmentName: segmentNames[(segment + 1) % 4],
      secondProbability: (1 - confidence) * random.float(),
      borderline: confidence < 0.7,
      atypical: false,
      tooNew: false,
      excluded: false,
      decision: null,
      marketingConsent: 1,
      revenue: spend * 12,
      features: { spend_per_month: spend, visits_per_month: 1 + 10 * random.float(), average_basket: 5 + 60 * random.float() },
    };
  }
}

function syntheticSource(rows: number): ExportSource {
  const features = defaultFeatureColumns;
  return {
    header: inventedRunHeader({ placed: rows, tooNew: 0, borderline: 0, atypical: 0 }, null),
    segments: segmentNames.map((name) => ({ name, customers: rows / 4, share: 0.25, revenue: 0, revenueShare: 0.25, medians: {} })),
    medianColumns: features,
    customerFeatureColumns: features,
    customers: () => syntheticCustomers(rows),
    reviewRows: () => [],
    movement: null,
  };
}

/** The reference: exceljs's streaming writer, 12 columns per row, no styles, no yields: as plain as it gets. */
async function bareExcelJs(rows: number, out: string): Promise<void> {
  const workbook = new ExcelJS.stream.xlsx.WorkbookWriter({ filename: out, useSharedStrings: false });
  const sheet = workbook.addWorksheet('Customers');
  sheet.addRow(['id', 'final', 'model', 'confidence', 'second', 'second p', 'flags', 'decision', 'consent', 'revenue', 'spend', 'visits']).commit();
  for (const row of syntheticCustomers(rows)) {
    sheet
      .addRow([
        row.customerId,
        row.finalSegmentName,
        row.modelSegmentName,
        row.confidence,
        row.secondSegmentName,
        row.secondProbability,
        row.borderline ? 'borderline' : null,
        row.decision,
        'yes',
        row.revenue,
        row.features.spend_per_month,
        row.features.visits_per_month,
      ])
      .commit();
  }
  sheet.commit();
  await workbook.commit();
}

function peakResidentMegabytes(): number {
  const match = /VmHWM:\s+(\d+) kB/.exec(readFileSync('/proc/self/status', 'utf8'));
  return match ? Number(match[1]) / 1024 : process.memoryUsage().rss / 1048576;
}

interface Measurement {
  side: 'reference' | 'export';
  seconds: number;
  peakMB: number;
  fileMB: number;
}

async function child(side: Measurement['side'], rows: number, out: string): Promise<void> {
  const started = performance.now();
  if (side === 'reference') await bareExcelJs(rows, out);
  else await exportSource(syntheticSource(rows), { out });
  const seconds = (performance.now() - started) / 1000;
  const measurement: Measurement = { side, seconds, peakMB: peakResidentMegabytes(), fileMB: statSync(out).size / 1048576 };
  process.stdout.write(`${JSON.stringify(measurement)}\n`);
}

function measure(side: Measurement['side'], rows: number, folder: string): Measurement {
  const out = join(folder, `${side}.xlsx`);
  const script = fileURLToPath(import.meta.url);
  const output = execFileSync(process.execPath, [...process.execArgv, script, '--child', side, '--rows', String(rows), '--out', out], {
    encoding: 'utf8',
    maxBuffer: 1 << 20,
  });
  rmSync(out, { force: true });
  return JSON.parse(output.trim().split('\n').pop() as string) as Measurement;
}

function median(values: number[]): number {
  const sorted = [...values].sort((a, b) => a - b);
  const middle = Math.floor(sorted.length / 2);
  return sorted.length % 2 === 1 ? sorted[middle] : (sorted[middle - 1] + sorted[middle]) / 2;
}

async function main(): Promise<void> {
  const rows = argument('--rows', 1_000_000);
  const childIndex = process.argv.indexOf('--child');
  if (childIndex >= 0) {
    const out = process.argv[process.argv.indexOf('--out') + 1];
    await child(process.argv[childIndex + 1] as Measurement['side'], rows, out);
    return;
  }
  const rounds = argument('--rounds', 1);
  const folder = mkdtempSync(join(tmpdir(), 'spendmix-bench-export-'));
  const results: Measurement[] = [];
  console.log(`export of ${rows.toLocaleString('en-GB')} customers to XLSX vs a bare exceljs streaming write (${rounds} round(s), order R E E R)`);
  for (let round = 0; round < rounds; round++) {
    for (const side of ['reference', 'export', 'export', 'reference'] as const) {
      const measurement = measure(side, rows, folder);
      results.push(measurement);
      console.log(`  ${side.padEnd(9)} ${measurement.seconds.toFixed(1)} s, peak ${measurement.peakMB.toFixed(0)} MB, file ${measurement.fileMB.toFixed(1)} MB`);
    }
  }
  rmSync(folder, { recursive: true, force: true });
  const of = (side: Measurement['side']) => results.filter((m) => m.side === side);
  const referenceSeconds = median(of('reference').map((m) => m.seconds));
  const exportSeconds = median(of('export').map((m) => m.seconds));
  const exportPeak = Math.max(...of('export').map((m) => m.peakMB));
  const referencePeak = Math.max(...of('reference').map((m) => m.peakMB));
  const ratio = exportSeconds / referenceSeconds;
  console.log(`median: bare exceljs ${referenceSeconds.toFixed(1)} s (peak ${referencePeak.toFixed(0)} MB), Spendmix export ${exportSeconds.toFixed(1)} s (peak ${exportPeak.toFixed(0)} MB)`);
  console.log(`time ratio export / bare = ${ratio.toFixed(2)} (required ≤ 1.30): ${ratio <= 1.3 ? 'met' : 'NOT met'}`);
  console.log(`peak memory of the export ${exportPeak.toFixed(0)} MB (required < 1024 MB): ${exportPeak < 1024 ? 'met' : 'NOT met'}`);
}

await main();
