import { spawn, spawnSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { chmodSync, chownSync, lstatSync, mkdirSync, mkdtempSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { buildSync } from 'esbuild';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { workerBundleOptions } from '../../src/workers/start-worker.js';

/**
 * No code is ever loaded from a shared folder (DESIGN.md §12). Another local user can write into
 * a world-writable sticky temp folder and guess any name derived from the package's own files,
 * so files are planted there — owned by `nobody` when the test runs as root — at every place
 * where Spendmix or its TypeScript loader ever looked for code:
 * - `spendmix-worker-<content hash>.mjs`, the worker bundles of earlier versions;
 * - `tsx-<uid>/`, tsx's compile cache, made by the other user and writable by them; any compiled
 *   module Spendmix leaves there is then replaced with the planted code before the next start.
 * Imports then run through the real entry points with TMPDIR pointing at that folder: the CLI
 * (parse worker bundle) and the browser host (task worker started through tsx, with the parse
 * worker inside it). Planted code would write a marker file; none may appear.
 */

const projectRoot = fileURLToPath(new URL('../..', import.meta.url));
const bin = join(projectRoot, 'src/cli/bin.mjs');
const uid = process.getuid?.() ?? -1;
const asRoot = uid === 0;
const NOBODY = 65534;

let folder: string;
let shared: string;
let markers: string;
let receipts: string;

/** Code that leaves a marker file named `name` when it runs. */
const markerCode = (name: string) =>
  `import { writeFileSync as __plantedWrite } from 'node:fs'; __plantedWrite(${JSON.stringify(join(markers, name))}, 'planted code ran as uid ' + process.getuid());\n`;

/** Writes a file as the other user would own it. */
function plant(path: string, content: string): void {
  writeFileSync(path, content);
  if (asRoot) chownSync(path, NOBODY, NOBODY);
}

/** The temp-folder name the worker bundle of `entry` had before bundles were kept in memory. */
function earlierBundleName(entry: string): string {
  const output = buildSync({
    ...workerBundleOptions(join(projectRoot, entry)),
    banner: { js: "import { createRequire as __spendmixRequire } from 'node:module'; const require = __spendmixRequire(import.meta.url);" },
  });
  return `spendmix-worker-${createHash('sha256').update(output.outputFiles[0].contents).digest('hex').slice(0, 16)}.mjs`;
}

const env = () => ({ ...process.env, TMPDIR: shared, TSX_DISABLE_CACHE: '' });

function cliImport(db: string): { code: number | null; stdout: string; stderr: string } {
  const result = spawnSync(process.execPath, [bin, 'import', '--db', db, '--receipts', receipts, '--json'], { cwd: projectRoot, env: env(), encoding: 'utf8' });
  return { code: result.status, stdout: result.stdout, stderr: result.stderr };
}

/** `spendmix serve`, an upload of the receipts and an import of it through the API. */
async function serveImport(db: string): Promise<{ state: string; rows: number | null; error: string | null }> {
  const rendererDir = join(folder, 'renderer');
  mkdirSync(rendererDir, { recursive: true });
  writeFileSync(join(rendererDir, 'index.html'), '<!doctype html><div id="root"></div>');
  const child = spawn(process.execPath, [bin, 'serve', '--db', db, '--renderer', rendererDir, '--json'], { cwd: projectRoot, env: env(), stdio: ['ignore', 'pipe', 'pipe'] });
  let stderr = '';
  child.stderr.on('data', (chunk: Buffer) => (stderr += chunk.toString()));
  try {
    const url = await new Promise<URL>((resolve, reject) => {
      let out = '';
      child.stdout.on('data', (chunk: Buffer) => {
        out += chunk.toString();
        const line = out.split('\n').find((text) => text.startsWith('{'));
        if (line) resolve(new URL((JSON.parse(line) as { url: string }).url));
      });
      child.once('exit', (code) => reject(new Error(`serve exited with ${code}: ${stderr}`)));
    });
    const token = url.searchParams.get('token')!;
    const headers = { 'x-spendmix-token': token, 'content-type': 'application/json' };
    const api = async (method: string, input: unknown) => {
      const response = await fetch(new URL(`/api/${method}`, url), { method: 'POST', headers, body: JSON.stringify(input) });
      const outcome = (await response.json()) as { ok: boolean; value?: Record<string, unknown>; error?: { message: string } };
      if (!outcome.ok) throw new Error(outcome.error!.message);
      return outcome.value!;
    };
    const upload = await fetch(new URL('/api/upload?name=receipts.csv', url), { method: 'POST', headers: { 'x-spendmix-token': token }, body: readFileSync(receipts) });
    const uploaded = (await upload.json()) as { value: { path: string } };
    const { taskId } = await api('importFile', { path: uploaded.value.path, kind: 'receipts' });
    for (;;) {
      const status = await api('taskStatus', { taskId });
      if (status.state !== 'queued' && status.state !== 'running') {
        const result = status.result as { rowsImported: number } | null;
        return { state: String(status.state), rows: result?.rowsImported ?? null, error: (status.error as { message: string } | null)?.message ?? null };
      }
      await new Promise((resolve) => setTimeout(resolve, 200));
    }
  } finally {
    const exited = new Promise((resolve) => child.once('exit', resolve));
    child.kill('SIGTERM');
    await exited;
  }
}

/** Replaces every compiled module in tsx's cache folder with planted code (the other user owns the folder). */
function poisonTsxCache(cache: string): number {
  let poisoned = 0;
  for (const name of readdirSync(cache)) {
    const path = join(cache, name);
    const entry = JSON.parse(readFileSync(path, 'utf8')) as { code: string };
    plant(path, JSON.stringify({ ...entry, code: markerCode(`tsx-cache-${name}`) + entry.code }));
    poisoned++;
  }
  return poisoned;
}

beforeAll(() => {
  folder = mkdtempSync(join(tmpdir(), 'spendmix-shared-code-'));
  shared = join(folder, 'shared');
  markers = join(folder, 'markers');
  mkdirSync(shared);
  chmodSync(shared, 0o1777);
  mkdirSync(markers);
  chmodSync(markers, 0o777);
  // Over 4 MiB, so the import parses in the worker thread.
  const lines = ['receipt_id,customer_id,date,amount'];
  for (let i = 0; i < 180_000; i++) lines.push(`R${i},C${i % 5000},2026-03-0${1 + (i % 9)},${1 + (i % 50)}.25`);
  receipts = join(folder, 'receipts.csv');
  writeFileSync(receipts, `${lines.join('\n')}\n`);
  expect(lstatSync(receipts).size).toBeGreaterThan(4 * 1024 * 1024);
});

afterAll(() => {
  spawnSync('rm', ['-rf', folder]);
});

describe('no code from a shared folder', () => {
  it('never runs a planted worker bundle, and writes nothing into the shared temp folder', async () => {
    const planted = [earlierBundleName('src/ingest/parse-worker.ts'), earlierBundleName('src/model/worker.ts')];
    for (const name of planted) plant(join(shared, name), markerCode(name));
    // tsx's cache folder of this user, made by the other one (an own one would be trusted).
    const tsxCache = join(shared, `tsx-${uid}`);
    if (asRoot) {
      mkdirSync(tsxCache);
      chmodSync(tsxCache, 0o777);
      chownSync(tsxCache, NOBODY, NOBODY);
    }

    const first = cliImport(join(folder, 'first.db'));
    expect(first.code, first.stderr).toBe(0);
    expect(JSON.parse(first.stdout)).toMatchObject({ rowsImported: 180_000 });
    const poisoned = asRoot ? poisonTsxCache(tsxCache) : 0;

    const second = cliImport(join(folder, 'second.db'));
    expect(second.code, second.stderr).toBe(0);
    expect(JSON.parse(second.stdout)).toMatchObject({ rowsImported: 180_000 });
    const served = await serveImport(join(folder, 'served.db'));
    expect(served, JSON.stringify(served)).toMatchObject({ state: 'done', rows: 180_000 });

    expect(readdirSync(markers)).toEqual([]);
    // Nothing of ours was left in the shared folder: no bundle, and compiled modules only in a
    // tsx cache folder that is our own and private (never in the other user's).
    expect(readdirSync(shared).filter((name) => !planted.includes(name) && name !== `tsx-${uid}`)).toEqual([]);
    if (asRoot) expect({ poisoned, cached: readdirSync(tsxCache).length }).toEqual({ poisoned: 0, cached: 0 });
    else expect({ owner: lstatSync(tsxCache).uid, othersMayEnter: (lstatSync(tsxCache).mode & 0o077) !== 0 }).toEqual({ owner: uid, othersMayEnter: false });
  }, 300_000);
});
