/**
 * How responsive the app's process stays while heavy work runs, and what the HTTP transport
 * costs — each as a ratio against a reference measured in the same run (absolute times beside).
 *
 * 1. The longest stall of the event loop (a 5 ms timer's latest tick) of the process that hosts the API while
 *    one segmentation run executes: on a worker thread (the app's way) against the same run on the
 *    calling thread (the reference: what the window would suffer without workers).
 * 2. Round trip of a small read (`listRuns`) through the browser host (HTTP, token, JSON) against
 *    the same call in process.
 *
 * Run: npx tsx test/bench/api-responsiveness.ts [--customers N] [--calls N]
 */
import { mkdirSync, mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { callApi } from '../../src/api/handlers.js';
import { startHost } from '../../src/api/http-host.js';
import { runLongTask } from '../../src/api/long-tasks.js';
import { ApiSession } from '../../src/api/session.js';
import type { TaskStarted } from '../../src/api/contract.js';

function option(name: string, fallback: number): number {
  const at = process.argv.indexOf(`--${name}`);
  return at > 0 ? Number(process.argv[at + 1]) : fallback;
}

const customers = option('customers', 3000);
const calls = option('calls', 500);
const folder = mkdtempSync(join(tmpdir(), 'spendmix-bench-api-'));
const dbPath = join(folder, 'bench.db');
const runInput = { asOf: '2026-11-30', kMin: 2, kMax: 5, covariance: 'auto' as const, restarts: 2 };

console.log(`Demo chain of ${customers} customers into ${dbPath} …`);
await runLongTask(
  { method: 'loadDemo', input: { customers, seed: 1 }, dbPath },
  { signal: new AbortController().signal, onProgress: () => undefined },
);

/**
 * Runs one segmentation while a 5 ms interval timer measures how late each of its ticks comes:
 * the longest gap is the longest time the process could not answer a click or a request.
 */
async function runWithDelayMonitor(session: ApiSession): Promise<{ seconds: number; maxMs: number; p99Ms: number }> {
  const gaps: number[] = [];
  let last = performance.now();
  const ticker = setInterval(() => {
    const now = performance.now();
    gaps.push(now - last);
    last = now;
  }, 5);
  const start = performance.now();
  const started = (await callApi(session, 'startRun', runInput)) as TaskStarted<'startRun'>;
  await session.tasks.wait(started);
  const seconds = (performance.now() - start) / 1000;
  clearInterval(ticker);
  gaps.push(performance.now() - last);
  gaps.sort((a, b) => a - b);
  return { seconds, maxMs: gaps[gaps.length - 1], p99Ms: gaps[Math.floor(0.99 * (gaps.length - 1))] };
}

// Reference: the run on the calling thread (same task code, no worker).
const inline = new ApiSession({ dbPath, shell: 'cli', runLongTask: (request, context) => runLongTask(request, context) });
const onCaller = await runWithDelayMonitor(inline);
await inline.close();
const threaded = new ApiSession({ dbPath, shell: 'cli' });
const onWorker = await runWithDelayMonitor(threaded);

const rendererDir = join(folder, 'renderer');
mkdirSync(rendererDir);
writeFileSync(join(rendererDir, 'index.html'), '<!doctype html><div id="root"></div>');
const host = await startHost({ session: threaded, rendererDir });
const time = async (label: string, once: () => Promise<unknown>) => {
  for (let i = 0; i < 20; i++) await once();
  const start = performance.now();
  for (let i = 0; i < calls; i++) await once();
  const perCallMs = (performance.now() - start) / calls;
  return { label, perCallMs };
};
const inProcess = await time('in process', () => callApi(threaded, 'listRuns', {}));
const overHttp = await time('HTTP', () =>
  fetch(`http://127.0.0.1:${host.port}/api/listRuns`, {
    method: 'POST',
    headers: { 'content-type': 'application/json', 'x-spendmix-token': host.token },
    body: '{}',
  }).then((response) => response.json()),
);
await host.close();
await threaded.close();

const fixed = (value: number, digits = 1) => value.toFixed(digits);
console.log('');
console.log(`Event-loop stalls of the API's process during one run (k 2–5 × 4 structures, ${customers} customers):`);
console.log(`  run on the calling thread (reference): ${fixed(onCaller.seconds)} s, longest stall ${fixed(onCaller.maxMs)} ms, p99 tick gap ${fixed(onCaller.p99Ms)} ms`);
console.log(`  run on a worker thread (the app):      ${fixed(onWorker.seconds)} s, longest stall ${fixed(onWorker.maxMs)} ms, p99 tick gap ${fixed(onWorker.p99Ms)} ms`);
console.log(`  longest stall, worker / calling thread: ${fixed(onWorker.maxMs / onCaller.maxMs, 3)}`);
console.log(`Small read (listRuns), ${calls} calls:`);
console.log(`  in process (reference): ${fixed(inProcess.perCallMs, 3)} ms per call`);
console.log(`  over HTTP with token:   ${fixed(overHttp.perCallMs, 3)} ms per call`);
console.log(`  HTTP / in process:      ${fixed(overHttp.perCallMs / inProcess.perCallMs, 1)}`);
