import { readFile } from 'node:fs/promises';
import { extname, join, normalize, resolve, sep } from 'node:path';
import { electronContentSecurityPolicy } from './security.js';

const contentTypes: Record<string, string> = {
  '.html': 'text/html; charset=utf-8',
  '.js': 'text/javascript; charset=utf-8',
  '.css': 'text/css; charset=utf-8',
  '.json': 'application/json; charset=utf-8',
  '.svg': 'image/svg+xml',
  '.png': 'image/png',
  '.woff2': 'font/woff2',
  '.map': 'application/json; charset=utf-8',
};

/**
 * Answers a request on our app scheme from the built renderer folder, with the content security
 * policy as a header. Paths are confined to the folder; unknown paths get index.html (the
 * screens route themselves), anything outside gets 404.
 */
export async function serveAppRequest(rendererDir: string, requestUrl: string): Promise<Response> {
  const root = resolve(rendererDir);
  const { pathname } = new URL(requestUrl);
  let decoded: string;
  try {
    decoded = decodeURIComponent(pathname);
  } catch {
    return new Response('Malformed path.', { status: 400 });
  }
  const candidate = normalize(join(root, decoded));
  if (candidate !== root && !candidate.startsWith(root + sep)) return new Response('Not found.', { status: 404 });
  let file = candidate;
  let body: Buffer;
  try {
    body = await readFile(file);
  } catch {
    file = join(root, 'index.html');
    body = await readFile(file);
  }
  const type = contentTypes[extname(file).toLowerCase()] ?? 'application/octet-stream';
  return new Response(new Uint8Array(body), {
    status: 200,
    headers: {
      'Content-Type': type,
      'Content-Security-Policy': electronContentSecurityPolicy,
      'X-Content-Type-Options': 'nosniff',
    },
  });
}
