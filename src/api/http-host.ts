import { randomBytes, timingSafeEqual } from 'node:crypto';
import { createReadStream, createWriteStream, existsSync, statSync } from 'node:fs';
import { createServer, type IncomingHttpHeaders, type IncomingMessage, type ServerResponse } from 'node:http';
import type { AddressInfo } from 'node:net';
import { extname, join, normalize, resolve, sep } from 'node:path';
import { InputError } from '../errors.js';
import { httpStatusFor, toApiError } from './api-errors.js';
import { contentSecurityPolicy } from './content-security-policy.js';
import { DEFAULT_MAX_UPLOAD_MIB, tokenHeader, type CallOutcome, type TaskEvent } from './contract.js';
import { SessionFolder } from './file-policy.js';
import { callApiOutcome } from './handlers.js';
import type { ApiSession } from './session.js';

export { contentSecurityPolicy };

/** The only interface the host listens on (DESIGN.md §12). */
export const HOST_ADDRESS = '127.0.0.1';

/** Largest JSON body a call may send; inputs are small (files go through /api/upload). */
const MAX_JSON_BYTES = 1024 * 1024;
/** Largest file an upload may send unless `serve --max-upload-mib` says otherwise: 2 GiB. */
export const DEFAULT_MAX_UPLOAD_BYTES = DEFAULT_MAX_UPLOAD_MIB * 2 ** 20;
/** SSE comment sent this often so idle connections are not dropped by anything in between. */
const HEARTBEAT_MS = 15_000;


const contentTypes: Record<string, string> = {
  '.html': 'text/html; charset=utf-8',
  '.js': 'text/javascript; charset=utf-8',
  '.mjs': 'text/javascript; charset=utf-8',
  '.css': 'text/css; charset=utf-8',
  '.json': 'application/json; charset=utf-8',
  '.svg': 'image/svg+xml',
  '.png': 'image/png',
  '.ico': 'image/x-icon',
  '.woff2': 'font/woff2',
  '.map': 'application/json; charset=utf-8',
};

const downloadTypes: Record<string, string> = {
  '.xlsx': 'application/vnd.openxmlformats-officedocument.spreadsheetml.sheet',
  '.csv': 'text/csv; charset=utf-8',
  '.sql': 'application/sql; charset=utf-8',
};

export interface HostOptions {
  session: ApiSession;
  /** Folder of the built renderer (index.html and its assets). */
  rendererDir: string;
  /** 0 (default) picks a free port. */
  port?: number;
  /** Session token; a fresh random one by default. */
  token?: string;
  /** Largest upload in bytes (default DEFAULT_MAX_UPLOAD_BYTES); larger ones are refused with 413. */
  maxUploadBytes?: number;
}

export interface RunningHost {
  /** The page's address with the session token, e.g. http://127.0.0.1:4310/?token=… */
  url: string;
  port: number;
  token: string;
  /** Folder that holds the files uploaded in this session (removed when the session closes). */
  uploadsDir: string;
  /** Largest upload accepted, in bytes. */
  maxUploadBytes: number;
  close(): Promise<void>;
}

/**
 * The local browser host: serves the built renderer and the API (POST /api/<method>), task
 * events as server-sent events (GET /api/events), file uploads (POST /api/upload) and finished
 * exports, once each (GET /api/download), on 127.0.0.1 only. Every request must name this host
 * in its Host header (127.0.0.1 or localhost with our port; others get 421 — a defence against
 * DNS rebinding); every /api/ request sent by a browser must come from this host's own page
 * (Origin and Sec-Fetch-Site; others get 403) and carry the session token (401 otherwise,
 * whatever the route). The API reaches only the session's database and its private folder
 * (see SessionFolder in file-policy.ts).
 */
export async function startHost(options: HostOptions): Promise<RunningHost> {
  const rendererDir = resolve(options.rendererDir);
  if (!existsSync(join(rendererDir, 'index.html'))) {
    throw new InputError(`The renderer is not built: ${join(rendererDir, 'index.html')} is missing. Run \`npm run build:renderer\` first.`);
  }
  const sessionFiles = options.session.files;
  if (!(sessionFiles instanceof SessionFolder)) {
    throw new Error('The browser host needs a session of the browser shell (its files confined to a session folder).');
  }
  const files: SessionFolder = sessionFiles;
  const maxUploadBytes = options.maxUploadBytes ?? DEFAULT_MAX_UPLOAD_BYTES;
  const token = options.token ?? randomBytes(24).toString('base64url');
  const tokenBytes = Buffer.from(token);
  const eventStreams = new Set<ServerResponse>();
  let port = 0;

  const unsubscribe = options.session.tasks.onEvent((event: TaskEvent) => {
    const frame = `data: ${JSON.stringify(event)}\n\n`;
    for (const stream of eventStreams) stream.write(frame);
  });
  const heartbeat = setInterval(() => {
    for (const stream of eventStreams) stream.write(': keep-alive\n\n');
  }, HEARTBEAT_MS);
  heartbeat.unref();

  const hasToken = (request: IncomingMessage, url: URL): boolean => {
    const header = request.headers[tokenHeader];
    const given = typeof header === 'string' ? header : url.searchParams.get('token') ?? '';
    const givenBytes = Buffer.from(given);
    return givenBytes.length === tokenBytes.length && timingSafeEqual(givenBytes, tokenBytes);
  };

  const server = createServer((request, response) => {
    void handle(request, response).catch((error: unknown) => {
      if (!response.headersSent) sendJson(response, 500, { ok: false, error: toApiError(error) });
      else response.destroy();
    });
  });

  async function handle(request: IncomingMessage, response: ServerResponse): Promise<void> {
    response.setHeader('X-Content-Type-Options', 'nosniff');
    response.setHeader('Referrer-Policy', 'no-referrer');
    if (!isOwnHost(request.headers.host, port)) {
      sendText(response, 421, 'This host only answers requests addressed to 127.0.0.1 or localhost on its own port.');
      return;
    }
    const url = new URL(request.url ?? '/', `http://${HOST_ADDRESS}:${port}`);
    if (url.pathname === '/api' || url.pathname.startsWith('/api/')) {
      response.setHeader('Cache-Control', 'no-store');
      if (!isOwnPageRequest(request.headers, port)) {
        sendJson(response, 403, {
          ok: false,
          error: { kind: 'input', message: 'Refused: the request came from another web page. Only the page this host serves may call its API.' },
        });
        return;
      }
      if (!hasToken(request, url)) {
        sendJson(response, 401, { ok: false, error: { kind: 'input', message: 'Missing or wrong session token.' } });
        return;
      }
      await handleApi(request, response, url);
      return;
    }
    if (request.method !== 'GET' && request.method !== 'HEAD') {
      sendText(response, 405, 'Only GET and HEAD are served outside /api/.');
      return;
    }
    serveStatic(response, url.pathname, request.method === 'HEAD');
  }

  async function handleApi(request: IncomingMessage, response: ServerResponse, url: URL): Promise<void> {
    const route = url.pathname.slice('/api/'.length);
    if (route === 'events') {
      if (request.method !== 'GET') return sendText(response, 405, 'Use GET for /api/events.');
      response.writeHead(200, { 'Content-Type': 'text/event-stream; charset=utf-8', Connection: 'keep-alive' });
      response.write(': connected\n\n');
      eventStreams.add(response);
      request.on('close', () => eventStreams.delete(response));
      return;
    }
    if (route === 'download') {
      if (request.method !== 'GET') return sendText(response, 405, 'Use GET for /api/download.');
      return sendExport(response, url.searchParams.get('path') ?? '');
    }
    if (request.method !== 'POST') return sendText(response, 405, `Use POST for /api/${route}.`);
    if (route === 'upload') {
      const outcome = await receiveUpload(request, url);
      const status = outcome.ok ? 200 : outcome.error.details?.tooLarge ? 413 : httpStatusFor(outcome.error);
      if (status === 413) response.setHeader('Connection', 'close');
      sendJson(response, status, outcome);
      return;
    }
    const body = await readJsonBody(request);
    const outcome = body.ok ? await callApiOutcome(options.session, route, body.value) : body;
    sendJson(response, outcome.ok ? 200 : httpStatusFor(outcome.error), outcome);
  }

  /** Streams an uploaded file into the session folder under its own (sanitised) name, within the size limit. */
  async function receiveUpload(request: IncomingMessage, url: URL): Promise<CallOutcome<{ path: string }>> {
    const name = url.searchParams.get('name') ?? '';
    if (name.trim() === '') {
      request.resume();
      return { ok: false, error: { kind: 'input', message: 'Give the file name as ?name=… on /api/upload.' } };
    }
    const tooLarge: CallOutcome<{ path: string }> = {
      ok: false,
      error: {
        kind: 'input',
        message: `The file is larger than this host accepts (${formatBytes(maxUploadBytes)}); start \`spendmix serve\` with a larger --max-upload-mib, or import it with \`spendmix import\`.`,
        details: { tooLarge: true, maxUploadBytes },
      },
    };
    if (Number(request.headers['content-length'] ?? 0) > maxUploadBytes) {
      request.resume();
      return tooLarge;
    }
    const target = files.allocateUpload(name);
    try {
      await saveWithin(request, target, maxUploadBytes);
    } catch (error) {
      files.discardUpload(target);
      if (error instanceof UploadTooLarge) return tooLarge;
      throw error;
    }
    files.acceptUpload(target);
    return { ok: true, value: { path: target } };
  }

  /** Sends a finished export once, as a download under its file name, then removes it. */
  function sendExport(response: ServerResponse, path: string): void {
    const ready = files.takeExport(path);
    if (!ready) {
      sendJson(response, 404, { ok: false, error: { kind: 'input', message: 'There is no export to download at that path (each export is downloaded once).' } });
      return;
    }
    response.writeHead(200, {
      'Content-Type': downloadTypes[extname(ready.name).toLowerCase()] ?? 'application/octet-stream',
      'Content-Length': statSync(ready.path).size,
      'Content-Disposition': contentDisposition(ready.name),
    });
    response.on('close', () => files.discardExport(ready.path));
    createReadStream(ready.path).pipe(response);
  }

  function serveStatic(response: ServerResponse, pathname: string, headOnly: boolean): void {
    let relativePath: string;
    try {
      relativePath = decodeURIComponent(pathname);
    } catch {
      return sendText(response, 400, 'Malformed path.');
    }
    const candidate = normalize(join(rendererDir, relativePath));
    if (candidate !== rendererDir && !candidate.startsWith(rendererDir + sep)) return sendText(response, 404, 'Not found.');
    // Paths without a file behind them are the single-page app's own: answer with index.html.
    const file = existsSync(candidate) && statSync(candidate).isFile() ? candidate : join(rendererDir, 'index.html');
    const type = contentTypes[extname(file).toLowerCase()] ?? 'application/octet-stream';
    const headers: Record<string, string | number> = { 'Content-Type': type, 'Content-Length': statSync(file).size };
    if (type.startsWith('text/html')) {
      headers['Content-Security-Policy'] = contentSecurityPolicy;
      headers['Cache-Control'] = 'no-store';
    }
    response.writeHead(200, headers);
    if (headOnly) response.end();
    else createReadStream(file).pipe(response);
  }

  await new Promise<void>((resolveListen, rejectListen) => {
    server.once('error', (error: NodeJS.ErrnoException) => {
      rejectListen(
        error.code === 'EADDRINUSE'
          ? new InputError(`Port ${options.port} on ${HOST_ADDRESS} is in use; choose another with --port.`)
          : error,
      );
    });
    server.listen({ host: HOST_ADDRESS, port: options.port ?? 0 }, () => resolveListen());
  });
  port = (server.address() as AddressInfo).port;

  return {
    url: `http://${HOST_ADDRESS}:${port}/?token=${token}`,
    port,
    token,
    uploadsDir: files.uploadsDir,
    maxUploadBytes,
    close: async () => {
      clearInterval(heartbeat);
      unsubscribe();
      for (const stream of eventStreams) stream.end();
      eventStreams.clear();
      await new Promise<void>((done) => {
        server.close(() => done());
        server.closeAllConnections();
      });
    },
  };
}

/** Host header check: exactly 127.0.0.1:<port> or localhost:<port> (any letter case for the name). */
export function isOwnHost(hostHeader: string | undefined, port: number): boolean {
  if (!hostHeader) return false;
  const host = hostHeader.toLowerCase();
  return host === `${HOST_ADDRESS}:${port}` || host === `localhost:${port}`;
}

async function readJsonBody(request: IncomingMessage): Promise<CallOutcome> {
  const chunks: Buffer[] = [];
  let size = 0;
  for await (const chunk of request as AsyncIterable<Buffer>) {
    size += chunk.length;
    if (size > MAX_JSON_BYTES) {
      return { ok: false, error: { kind: 'input', message: `Request body over ${MAX_JSON_BYTES} bytes; files go through /api/upload.` } };
    }
    chunks.push(chunk);
  }
  const text = Buffer.concat(chunks).toString('utf8').trim();
  if (text === '') return { ok: true, value: {} };
  try {
    return { ok: true, value: JSON.parse(text) as unknown };
  } catch (error) {
    return { ok: false, error: { kind: 'input', message: `The request body is not valid JSON: ${(error as Error).message}` } };
  }
}

/** Thrown by the upload's byte counter when a body passes the limit. */
class UploadTooLarge extends Error {}

/**
 * Writes a request body to a new file, failing with UploadTooLarge as soon as it passes `limit`
 * bytes. The request is left open (not destroyed) so the caller can still answer 413.
 */
function saveWithin(request: IncomingMessage, path: string, limit: number): Promise<void> {
  return new Promise((resolveSave, rejectSave) => {
    const output = createWriteStream(path, { flags: 'wx', mode: 0o600 });
    let received = 0;
    let settled = false;
    const fail = (error: Error) => {
      if (settled) return;
      settled = true;
      request.unpipe(output);
      request.resume();
      output.destroy();
      rejectSave(error);
    };
    request.on('data', (chunk: Buffer) => {
      received += chunk.length;
      if (received > limit) fail(new UploadTooLarge());
    });
    request.once('error', fail);
    request.once('close', () => {
      if (!request.complete) fail(new Error('The upload was broken off.'));
    });
    output.once('error', fail);
    output.once('finish', () => {
      if (settled) return;
      settled = true;
      resolveSave();
    });
    request.pipe(output);
  });
}

/**
 * A call from a browser must come from this host's own page: a state-changing request sent by
 * another site carries its Origin, and browsers mark every request with Sec-Fetch-Site. Requests
 * without these headers are not from a web page (the CLI, tests); they still need the token.
 */
export function isOwnPageRequest(headers: IncomingHttpHeaders, port: number): boolean {
  const site = headers['sec-fetch-site'];
  if (site !== undefined && site !== 'same-origin') return false;
  const origin = headers.origin;
  return origin === undefined || origin === `http://${HOST_ADDRESS}:${port}` || origin === `http://localhost:${port}`;
}

/** attachment; with an ASCII name and the exact name in RFC 5987 form (RFC 6266). */
function contentDisposition(name: string): string {
  const ascii = name.replace(/[^\x20-\x7e]|["\\]/g, '_');
  return `attachment; filename="${ascii}"; filename*=UTF-8''${encodeURIComponent(name)}`;
}

function formatBytes(bytes: number): string {
  for (const [unit, size] of [['GiB', 1024 ** 3], ['MiB', 1024 ** 2], ['KiB', 1024]] as const) {
    if (bytes >= size && bytes % size === 0) return `${bytes / size} ${unit}`;
  }
  return `${bytes.toLocaleString('en-GB')} bytes`;
}

function sendJson(response: ServerResponse, status: number, body: unknown): void {
  const text = JSON.stringify(body);
  response.writeHead(status, { 'Content-Type': 'application/json; charset=utf-8', 'Content-Length': Buffer.byteLength(text) });
  response.end(text);
}

function sendText(response: ServerResponse, status: number, text: string): void {
  response.writeHead(status, { 'Content-Type': 'text/plain; charset=utf-8', 'Content-Length': Buffer.byteLength(text) });
  response.end(text);
}
