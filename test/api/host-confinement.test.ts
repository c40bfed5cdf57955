import { existsSync, mkdirSync, mkdtempSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { request as httpRequest } from 'node:http';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { CallOutcome, TaskStatus } from '../../src/api/contract.js';
import { callApiOutcome } from '../../src/api/handlers.js';
import { startHost, type RunningHost } from '../../src/api/http-host.js';
import { ApiSession } from '../../src/api/session.js';
import { runCli } from '../../src/cli/program.js';
import { demoDatabase, type DemoDatabase } from '../runs/demo-database.js';

/**
 * The browser host is confined (DESIGN.md §12): whoever holds its token reaches its one database,
 * the files uploaded into its private session folder and its own exports, as downloads — never
 * another file of the user's. Each attack goes through the real HTTP host.
 */

interface Answer {
  status: number;
  headers: Record<string, string | string[] | undefined>;
  body: Buffer;
  json: <T = unknown>() => CallOutcome<T>;
}

function send(port: number, options: { method?: string; path: string; headers?: Record<string, string>; body?: string | Buffer; chunks?: Buffer[] }): Promise<Answer> {
  return new Promise((resolve, reject) => {
    const req = httpRequest({ host: '127.0.0.1', port, method: options.method ?? 'POST', path: options.path, headers: options.headers }, (res) => {
      const chunks: Buffer[] = [];
      res.on('data', (chunk: Buffer) => chunks.push(chunk));
      res.on('end', () => {
        const body = Buffer.concat(chunks);
        resolve({ status: res.statusCode ?? 0, headers: res.headers, body, json: () => JSON.parse(body.toString('utf8')) });
      });
    });
    req.on('error', reject);
    if (options.chunks) {
      for (const chunk of options.chunks) req.write(chunk);
      req.end();
    } else req.end(options.body);
  });
}

describe('the browser host touches only its own files', () => {
  let demo: DemoDatabase;
  let folder: string;
  let session: ApiSession;
  let host: RunningHost;
  const maxUploadBytes = 64 * 1024;

  const call = (method: string, input: unknown, headers: Record<string, string> = {}) =>
    send(host.port, { path: `/api/${method}`, headers: { 'content-type': 'application/json', 'x-spendmix-token': host.token, ...headers }, body: JSON.stringify(input) });

  async function finished(taskId: string): Promise<TaskStatus> {
    for (;;) {
      const status = (await call('taskStatus', { taskId })).json<TaskStatus>();
      if (!status.ok) throw new Error(status.error.message);
      if (status.value.state !== 'running' && status.value.state !== 'queued') return status.value;
      await new Promise((resolve) => setTimeout(resolve, 100));
    }
  }

  beforeAll(async () => {
    demo = await demoDatabase('sample');
    demo.db.close();
    const io = { stdout: () => undefined, stderr: () => undefined };
    expect(await runCli(['refresh', '--db', demo.path, '--as-of', '2026-10-31', '--k', '3', '--covariance', 'diag', '--restarts', '1'], io)).toBe(0);
    folder = mkdtempSync(join(tmpdir(), 'spendmix-confined-'));
    const rendererDir = join(folder, 'renderer');
    mkdirSync(rendererDir);
    writeFileSync(join(rendererDir, 'index.html'), '<!doctype html><div id="root"></div>');
    session = new ApiSession({ dbPath: demo.path, shell: 'browser' });
    host = await startHost({ session, rendererDir, maxUploadBytes });
  }, 300_000);

  afterAll(async () => {
    await host?.close();
    await session?.close();
    demo?.close();
  });

  it('previewFile and importFile refuse a file that was not uploaded', async () => {
    const secret = join(folder, 'private-notes.csv');
    writeFileSync(secret, 'customer_id,date,amount\nSECRET-1,2026-01-01,1.00\n');
    const preview = await call('previewFile', { path: secret, kind: 'receipts' });
    expect(preview.status).toBe(400);
    expect(preview.body.toString()).not.toContain('SECRET-1');
    const refused = preview.json();
    expect(!refused.ok && refused.error.message).toMatch(/was not uploaded in this session: the browser host reads only files uploaded/);
    for (const path of ['/etc/passwd', `${host.uploadsDir}/../../../etc/passwd`, host.uploadsDir]) {
      const answer = await call('previewFile', { path, kind: 'receipts' });
      expect(answer.status, path).toBe(400);
      expect(answer.body.toString()).not.toContain('root:');
    }
    const importing = await call('importFile', { path: secret, kind: 'receipts' });
    expect(importing.status).toBe(400);
    expect(importing.body.toString()).toMatch(/was not uploaded/);
  });

  it('reads a file once it is uploaded', async () => {
    const upload = await send(host.port, {
      path: `/api/upload?name=${encodeURIComponent('march receipts.csv')}`,
      headers: { 'x-spendmix-token': host.token },
      body: 'customer_id,date,amount\nC00001,2026-03-01,12.50\n',
    });
    expect(upload.status).toBe(200);
    const uploaded = upload.json<{ path: string }>();
    if (!uploaded.ok) throw new Error(uploaded.error.message);
    const preview = await call('previewFile', { path: uploaded.value.path, kind: 'receipts' });
    expect(preview.status).toBe(200);
    expect(preview.body.toString()).toContain('C00001');
  });

  it('exportRun never writes outside the session folder, and the export is downloaded once', async () => {
    const victim = join(folder, 'victim.csv');
    writeFileSync(victim, 'precious work\n');
    const started = await call('exportRun', { runId: 1, out: victim, format: 'csv' });
    expect(started.status).toBe(200);
    const task = started.json<{ taskId: string }>();
    if (!task.ok) throw new Error(task.error.message);
    const status = await finished(task.value.taskId);
    expect(status.state, status.error?.message).toBe('done');
    expect(readFileSync(victim, 'utf8')).toBe('precious work\n');
    const out = (status.result as { out: string }).out;
    expect(out).not.toBe(victim);
    expect(out).toMatch(/spendmix-session-[^/]+\/exports\/export-[^/]+\/victim\.csv$/);

    const noToken = await send(host.port, { method: 'GET', path: `/api/download?path=${encodeURIComponent(out)}` });
    expect(noToken.status).toBe(401);
    const download = await send(host.port, { method: 'GET', path: `/api/download?path=${encodeURIComponent(out)}`, headers: { 'x-spendmix-token': host.token } });
    expect(download.status).toBe(200);
    expect(download.headers['content-disposition']).toBe(`attachment; filename="victim.csv"; filename*=UTF-8''victim.csv`);
    expect(download.headers['content-type']).toBe('text/csv; charset=utf-8');
    expect(download.body.toString('utf8')).toMatch(/\nC00\d{3},/);
    await new Promise((resolve) => setTimeout(resolve, 200));
    expect(existsSync(out)).toBe(false);
    const again = await send(host.port, { method: 'GET', path: `/api/download?path=${encodeURIComponent(out)}`, headers: { 'x-spendmix-token': host.token } });
    expect(again.status).toBe(404);
    const other = await send(host.port, { method: 'GET', path: `/api/download?path=${encodeURIComponent(victim)}`, headers: { 'x-spendmix-token': host.token } });
    expect(other.status).toBe(404);
    expect(other.body.toString()).not.toContain('precious');
  });

  it('modelSql with a file writes the query only into the session folder, for one download', async () => {
    const victim = join(folder, 'victim.sql');
    writeFileSync(victim, 'precious query\n');
    const answer = (await call('modelSql', { runId: 1, dialect: 'postgres', out: victim })).json<{ sql: string; out: string }>();
    if (!answer.ok) throw new Error(answer.error.message);
    expect(readFileSync(victim, 'utf8')).toBe('precious query\n');
    expect(answer.value.out).toMatch(/spendmix-session-[^/]+\/exports\/export-[^/]+\/victim\.sql$/);
    const download = await send(host.port, { method: 'GET', path: `/api/download?path=${encodeURIComponent(answer.value.out)}`, headers: { 'x-spendmix-token': host.token } });
    expect(download.status).toBe(200);
    expect(download.headers['content-type']).toBe('application/sql; charset=utf-8');
    expect(download.headers['content-disposition']).toBe(`attachment; filename="victim.sql"; filename*=UTF-8''victim.sql`);
    expect(download.body.toString('utf8')).toBe(answer.value.sql);
    await new Promise((resolve) => setTimeout(resolve, 200));
    const again = await send(host.port, { method: 'GET', path: `/api/download?path=${encodeURIComponent(answer.value.out)}`, headers: { 'x-spendmix-token': host.token } });
    expect(again.status).toBe(404);
  });

  it('openDatabase opens the database given at start and nothing else', async () => {
    const elsewhere = join(folder, 'planted.db');
    const answer = await call('openDatabase', { path: elsewhere });
    expect(answer.status).toBe(400);
    const refused = answer.json();
    expect(!refused.ok && refused.error.message).toMatch(/works on .* only/);
    expect(existsSync(elsewhere)).toBe(false);
    const same = await call('openDatabase', { path: demo.path });
    expect(same.status).toBe(200);
  });

  it('refuses uploads over the stated limit (413), with or without a length, and keeps nothing of them', async () => {
    const before = readdirSync(host.uploadsDir).length;
    const big = Buffer.alloc(maxUploadBytes + 1, 'a');
    const declared = await send(host.port, { path: '/api/upload?name=big.csv', headers: { 'x-spendmix-token': host.token }, body: big });
    expect(declared.status).toBe(413);
    const refused = declared.json();
    expect(!refused.ok && refused.error.message).toMatch(/larger than this host accepts \(64 KiB\)/);
    const streamed = await send(host.port, {
      path: '/api/upload?name=big.csv',
      headers: { 'x-spendmix-token': host.token, 'transfer-encoding': 'chunked' },
      chunks: Array.from({ length: 8 }, () => Buffer.alloc(maxUploadBytes / 4, 'b')),
    });
    expect(streamed.status).toBe(413);
    expect(readdirSync(host.uploadsDir).length).toBe(before);
    const exact = await send(host.port, { path: '/api/upload?name=fits.csv', headers: { 'x-spendmix-token': host.token }, body: Buffer.alloc(maxUploadBytes, 'c') });
    expect(exact.status).toBe(200);
  });

  it('refuses calls a browser sends from another page (Origin, Sec-Fetch-Site), even with the token', async () => {
    const own = `http://127.0.0.1:${host.port}`;
    const foreign: Record<string, string>[] = [
      { origin: 'http://evil.example' },
      { origin: `http://localhost:${host.port + 1}`, 'sec-fetch-site': 'same-site' },
      { 'sec-fetch-site': 'cross-site' },
      { origin: 'null' },
      { origin: own, 'sec-fetch-site': 'same-site' },
    ];
    for (const headers of foreign) {
      const answer = await call('openDatabase', { path: demo.path }, headers);
      expect(answer.status, JSON.stringify(headers)).toBe(403);
      const upload = await send(host.port, { path: '/api/upload?name=x.csv', headers: { 'x-spendmix-token': host.token, ...headers }, body: 'a,b\n' });
      expect(upload.status, JSON.stringify(headers)).toBe(403);
    }
    expect((await call('databaseInfo', {}, { origin: own, 'sec-fetch-site': 'same-origin' })).status).toBe(200);
    expect((await call('databaseInfo', {}, { origin: `http://localhost:${host.port}` })).status).toBe(200);
  });
});

describe('the desktop app and the CLI work on the user\'s own paths', () => {
  it('previews any file the user names and exports where the user chose', async () => {
    const folder = mkdtempSync(join(tmpdir(), 'spendmix-user-paths-'));
    const session = new ApiSession({ dbPath: join(folder, 'user.db'), shell: 'electron' });
    try {
      const file = join(folder, 'receipts.csv');
      writeFileSync(file, 'customer_id,date,amount\nC1,2026-03-01,12.50\n');
      const preview = await callApiOutcome(session, 'previewFile', { path: file, kind: 'receipts' });
      expect(preview.ok).toBe(true);
      const elsewhere = join(folder, 'second.db');
      expect((await callApiOutcome(session, 'openDatabase', { path: elsewhere })).ok).toBe(true);
      expect(existsSync(elsewhere)).toBe(true);
    } finally {
      await session.close();
    }
  });
});
