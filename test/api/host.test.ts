import { mkdirSync, mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { request as httpRequest } from 'node:http';
import { connect } from 'node:net';
import { networkInterfaces, tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { CallOutcome, TaskEvent } from '../../src/api/contract.js';
import { contentSecurityPolicy, isOwnHost, startHost, type RunningHost } from '../../src/api/http-host.js';
import { ApiSession } from '../../src/api/session.js';

/** One raw HTTP request, so the test controls the Host header (fetch would not let it). */
function send(
  port: number,
  options: { method?: string; path: string; host?: string; headers?: Record<string, string>; body?: string | Buffer },
): Promise<{ status: number; headers: Record<string, string | string[] | undefined>; body: string }> {
  return new Promise((resolve, reject) => {
    const req = httpRequest(
      {
        host: '127.0.0.1',
        port,
        method: options.method ?? 'GET',
        path: options.path,
        headers: { host: options.host ?? `127.0.0.1:${port}`, ...options.headers },
      },
      (res) => {
        const chunks: Buffer[] = [];
        res.on('data', (chunk: Buffer) => chunks.push(chunk));
        res.on('end', () => resolve({ status: res.statusCode ?? 0, headers: res.headers, body: Buffer.concat(chunks).toString('utf8') }));
      },
    );
    req.on('error', reject);
    if (options.body !== undefined) req.end(options.body);
    else req.end();
  });
}

describe('browser host (DESIGN.md §12)', () => {
  let folder: string;
  let session: ApiSession;
  let host: RunningHost;

  beforeAll(async () => {
    folder = mkdtempSync(join(tmpdir(), 'spendmix-host-'));
    const rendererDir = join(folder, 'renderer');
    mkdirSync(join(rendererDir, 'assets'), { recursive: true });
    writeFileSync(join(rendererDir, 'index.html'), '<!doctype html><title>Spendmix</title><div id="root"></div>');
    writeFileSync(join(rendererDir, 'assets', 'app.js'), 'console.log("spendmix");');
    writeFileSync(join(folder, 'secret.txt'), 'outside the renderer folder');
    session = new ApiSession({ dbPath: join(folder, 'host.db'), shell: 'browser' });
    host = await startHost({ session, rendererDir });
  });

  afterAll(async () => {
    await host.close();
    await session.close();
  });

  const withToken = () => ({ 'x-spendmix-token': host.token });

  it('listens on 127.0.0.1 only and prints its address with the token', async () => {
    expect(host.url).toBe(`http://127.0.0.1:${host.port}/?token=${host.token}`);
    expect(host.token.length).toBeGreaterThanOrEqual(32);
    // Every other address of this machine must refuse the connection.
    const otherAddresses = Object.values(networkInterfaces())
      .flat()
      .filter((entry) => entry && entry.address !== '127.0.0.1' && !entry.internal)
      .map((entry) => entry!.address);
    for (const address of [...otherAddresses, '::1']) {
      const outcome = await new Promise<string>((resolve) => {
        const socket = connect({ host: address, port: host.port });
        socket.once('connect', () => {
          socket.destroy();
          resolve('connected');
        });
        socket.once('error', (error: NodeJS.ErrnoException) => resolve(error.code ?? 'error'));
      });
      expect(outcome, `connection to ${address}`).not.toBe('connected');
    }
  });

  it('refuses a foreign Host header on the page and on the API (DNS rebinding defence)', async () => {
    for (const hostHeader of ['evil.example', `evil.example:${host.port}`, `127.0.0.1:${host.port + 1}`, `localhost`, `192.168.1.5:${host.port}`]) {
      const page = await send(host.port, { path: '/', host: hostHeader });
      expect(page.status, hostHeader).toBe(421);
      const api = await send(host.port, { method: 'POST', path: '/api/databaseInfo', host: hostHeader, headers: withToken(), body: '{}' });
      expect(api.status, hostHeader).toBe(421);
    }
    expect((await send(host.port, { path: '/', host: `localhost:${host.port}` })).status).toBe(200);
    expect(isOwnHost(`LOCALHOST:${host.port}`, host.port)).toBe(true);
    expect(isOwnHost(undefined, host.port)).toBe(false);
  });

  it('answers 401 to every /api/ request without the token, whatever the route', async () => {
    const routes: { method: string; path: string }[] = [
      { method: 'POST', path: '/api/databaseInfo' },
      { method: 'POST', path: '/api/loadDemo' },
      { method: 'POST', path: '/api/noSuchMethod' },
      { method: 'GET', path: '/api/events' },
      { method: 'POST', path: '/api/upload?name=x.csv' },
      { method: 'GET', path: '/api/' },
      { method: 'DELETE', path: '/api/anything/at/all' },
      { method: 'GET', path: '/api' },
    ];
    for (const route of routes) {
      const answer = await send(host.port, { ...route, body: route.method === 'POST' ? '{}' : undefined });
      expect(answer.status, `${route.method} ${route.path}`).toBe(401);
      const wrong = await send(host.port, { ...route, headers: { 'x-spendmix-token': `${host.token}x` } });
      expect(wrong.status, `${route.method} ${route.path} with a wrong token`).toBe(401);
    }
  });

  it('serves the page with its content security policy, and nothing outside the renderer folder', async () => {
    const page = await send(host.port, { path: '/' });
    expect(page.status).toBe(200);
    expect(page.headers['content-security-policy']).toBe(contentSecurityPolicy);
    expect(contentSecurityPolicy).toContain("script-src 'self'");
    expect(contentSecurityPolicy).not.toMatch(/script-src[^;]*unsafe/);
    const script = await send(host.port, { path: '/assets/app.js' });
    expect(script.headers['content-type']).toMatch(/^text\/javascript/);
    const escape = await send(host.port, { path: '/..%2Fsecret.txt' });
    expect(escape.body).not.toContain('outside the renderer folder');
    // Screen routes fall back to the page itself.
    expect((await send(host.port, { path: '/segments' })).body).toContain('<div id="root">');
  });

  it('runs API calls with the token (header or query) and reports bad input as 400 naming the field', async () => {
    const info = await send(host.port, { method: 'POST', path: '/api/databaseInfo', headers: withToken(), body: '{}' });
    expect(info.status).toBe(200);
    const outcome = JSON.parse(info.body) as CallOutcome<{ path: string; customers: number }>;
    expect(outcome.ok && outcome.value.customers).toBe(0);
    const viaQuery = await send(host.port, { method: 'POST', path: `/api/databaseInfo?token=${host.token}`, body: '' });
    expect(viaQuery.status).toBe(200);

    const bad = await send(host.port, { method: 'POST', path: '/api/importFile', headers: withToken(), body: JSON.stringify({ path: 'x.csv', kind: 'sales' }) });
    expect(bad.status).toBe(400);
    const failure = JSON.parse(bad.body) as CallOutcome;
    expect(failure.ok).toBe(false);
    if (!failure.ok) {
      expect(failure.error.kind).toBe('input');
      expect(failure.error.message).toMatch(/kind/);
      expect(failure.error.issues?.map((issue) => issue.path)).toEqual(['kind']);
    }
    const notJson = await send(host.port, { method: 'POST', path: '/api/databaseInfo', headers: withToken(), body: '{oops' });
    expect(notJson.status).toBe(400);
    expect(notJson.body).toMatch(/not valid JSON/);
    const unknown = await send(host.port, { method: 'POST', path: '/api/dropTables', headers: withToken(), body: '{}' });
    expect(unknown.status).toBe(400);
    expect((JSON.parse(unknown.body) as { error: { message: string } }).error.message).toMatch(/Unknown API method "dropTables"/);
  });

  it('stores an upload in the session folder under its own name', async () => {
    const answer = await send(host.port, {
      method: 'POST',
      path: `/api/upload?name=${encodeURIComponent('../../March receipts.csv')}`,
      headers: withToken(),
      body: 'customer_id,date,amount\nC1,2026-03-01,12.50\n',
    });
    expect(answer.status).toBe(200);
    const outcome = JSON.parse(answer.body) as CallOutcome<{ path: string }>;
    expect(outcome.ok).toBe(true);
    if (outcome.ok) {
      expect(outcome.value.path.startsWith(host.uploadsDir)).toBe(true);
      expect(outcome.value.path.endsWith('March receipts.csv')).toBe(true);
      expect(readFileSync(outcome.value.path, 'utf8')).toContain('C1,2026-03-01,12.50');
    }
  });

  it('streams task events over server-sent events', async () => {
    const events: TaskEvent[] = [];
    const done = new Promise<void>((resolve, reject) => {
      const req = httpRequest({ host: '127.0.0.1', port: host.port, path: `/api/events?token=${host.token}` }, (res) => {
        expect(res.headers['content-type']).toMatch(/^text\/event-stream/);
        let buffer = '';
        res.on('data', (chunk: Buffer) => {
          buffer += chunk.toString('utf8');
          for (let end = buffer.indexOf('\n\n'); end >= 0; end = buffer.indexOf('\n\n')) {
            const frame = buffer.slice(0, end);
            buffer = buffer.slice(end + 2);
            if (frame.startsWith('data: ')) events.push(JSON.parse(frame.slice(6)) as TaskEvent);
            if (events.some((event) => event.type === 'done')) {
              req.destroy();
              resolve();
            }
          }
        });
        // Once connected, start a task whose body is a small in-process function.
        const started = session.tasks.start('exportRun', async ({ onProgress }) => {
          onProgress({ phase: 'writing', done: 1, total: 2, message: 'half way' });
          return { out: 'x.xlsx', sheets: ['Overview'], customersExported: 3, suppressedNoConsent: 1 };
        });
        expect(started.method).toBe('exportRun');
      });
      req.on('error', reject);
      req.end();
    });
    await done;
    expect(events.map((event) => event.type)).toEqual(['progress', 'done']);
    expect(events[0]).toMatchObject({ phase: 'writing', done: 1, total: 2, message: 'half way' });
  });
});
