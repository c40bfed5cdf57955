import { createHash } from 'node:crypto';
import { existsSync, renameSync, writeFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { Worker, type WorkerOptions } from 'node:worker_threads';

/** Bundled worker files of this process, by module URL. */
const bundles = new Map<string, string | null>();

/**
 * From source, one JavaScript file holding the worker module and everything it imports, built
 * with esbuild and kept in the temp folder under its content hash (so it is written once per
 * version of the code). Starting a worker on it takes a fraction of the time of registering
 * tsx's loader in every worker and compiling each module there. Null if bundling fails.
 */
function bundledWorker(moduleUrl: URL): string | null {
  const known = bundles.get(moduleUrl.href);
  if (known !== undefined) return known;
  let path: string | null = null;
  try {
    const esbuild = createRequire(import.meta.url)('esbuild') as typeof import('esbuild');
    const output = esbuild.buildSync({
      entryPoints: [fileURLToPath(moduleUrl)],
      bundle: true,
      platform: 'node',
      format: 'esm',
      target: 'node20',
      write: false,
      logLevel: 'silent',
      banner: { js: "import { createRequire as __spendmixRequire } from 'node:module'; const require = __spendmixRequire(import.meta.url);" },
    });
    const code = output.outputFiles[0].contents;
    const hash = createHash('sha256').update(code).digest('hex').slice(0, 16);
    path = join(tmpdir(), `spendmix-worker-${hash}.mjs`);
    if (!existsSync(path)) {
      const partial = `${path}.${process.pid}.tmp`;
      writeFileSync(partial, code);
      renameSync(partial, path); // atomic: a concurrent process never sees half a file
    }
  } catch {
    path = null;
  }
  bundles.set(moduleUrl.href, path);
  return path;
}

export interface StartWorkerOptions {
  /**
   * From source, run an esbuild bundle of the module (fast to start). Only for modules that load
   * no native addon: a bundle cannot carry better-sqlite3's binding.
   */
  bundle?: boolean;
}

/**
 * Starts a worker thread on a module given by URL, from source or from compiled JavaScript.
 * Compiled builds (.js, as in the Electron app) start the file directly. Node 20 cannot load a
 * .ts module in a Worker by itself, so from source (tsx, vitest) the worker runs an esbuild bundle
 * of the module when `bundle` is set and bundling works, or else a tiny bootstrap that registers
 * tsx's ESM loader and then imports the .ts module.
 */
export function startWorker(
  moduleUrl: URL,
  options: Omit<WorkerOptions, 'eval'> = {},
  { bundle = false }: StartWorkerOptions = {},
): Worker {
  if (!moduleUrl.pathname.endsWith('.ts')) return new Worker(moduleUrl, options);
  const bundled = bundle ? bundledWorker(moduleUrl) : null;
  if (bundled) return new Worker(pathToFileURL(bundled), options);
  // The package's ESM entry of tsx/esm/api sits beside the CommonJS one that require resolves.
  const tsxApi = pathToFileURL(createRequire(import.meta.url).resolve('tsx/esm/api').replace(/\.cjs$/, '.mjs')).href;
  const bootstrap =
    `import(${JSON.stringify(tsxApi)})` +
    `.then((api) => { api.register(); return import(${JSON.stringify(moduleUrl.href)}); })` +
    `.catch((error) => { process.nextTick(() => { throw error; }); });`;
  return new Worker(bootstrap, { ...options, eval: true });
}
