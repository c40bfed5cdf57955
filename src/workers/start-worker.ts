import { createRequire } from 'node:module';
import { fileURLToPath } from 'node:url';
import { Worker, type WorkerOptions } from 'node:worker_threads';

/** Bundled worker modules of this process, as data: URLs, by module URL (null: bundling failed). */
const bundles = new Map<string, URL | null>();

/** esbuild's options for one worker module bundled into a single ES module, kept in memory. */
export function workerBundleOptions(modulePath: string) {
  return { entryPoints: [modulePath], bundle: true, platform: 'node' as const, format: 'esm' as const, target: 'node20', write: false as const, logLevel: 'silent' as const };
}

/**
 * From source, the worker module and everything it imports as one ES module built in memory with
 * esbuild and handed to the Worker as a data: URL. Starting a worker on it takes a fraction of
 * the time of registering tsx's loader in every worker and compiling each module there. Nothing
 * is written to disk: a bundle kept in a shared folder (the temp folder) could be replaced by
 * another local user and would then run as whoever starts the worker. Null if bundling fails.
 */
function bundledWorker(moduleUrl: URL): URL | null {
  const known = bundles.get(moduleUrl.href);
  if (known !== undefined) return known;
  let bundle: URL | null = null;
  try {
    const modulePath = fileURLToPath(moduleUrl);
    const esbuild = createRequire(import.meta.url)('esbuild') as typeof import('esbuild');
    const output = esbuild.buildSync({
      ...workerBundleOptions(modulePath),
      // CommonJS dependencies bundled into an ES module still call require() for Node's built-ins;
      // a data: URL has no file to resolve from, so require resolves from the module's own path.
      banner: {
        js: `import { createRequire as __spendmixRequire } from 'node:module'; const require = __spendmixRequire(${JSON.stringify(modulePath)});`,
      },
    });
    bundle = new URL(`data:text/javascript;base64,${Buffer.from(output.outputFiles[0].contents).toString('base64')}`);
  } catch {
    bundle = null;
  }
  bundles.set(moduleUrl.href, bundle);
  return bundle;
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
 * Compiled builds (.js, as in the Electron app) start the file inside the package directly.
 * Node 20 cannot load a .ts module in a Worker by itself, so from source (tsx, vitest) the worker
 * runs an in-memory esbuild bundle of the module when `bundle` is set and bundling works, or else
 * a tiny bootstrap that registers tsx's ESM loader (its compile cache checked private first, see
 * src/cli/register-tsx.mjs) and then imports the .ts module from the package.
 */
export function startWorker(
  moduleUrl: URL,
  options: Omit<WorkerOptions, 'eval'> = {},
  { bundle = false }: StartWorkerOptions = {},
): Worker {
  if (!moduleUrl.pathname.endsWith('.ts')) return new Worker(moduleUrl, options);
  const bundled = bundle ? bundledWorker(moduleUrl) : null;
  if (bundled) return new Worker(bundled, options);
  const registerTsx = new URL('../cli/register-tsx.mjs', import.meta.url).href;
  const bootstrap =
    `import(${JSON.stringify(registerTsx)})` +
    `.then(() => import(${JSON.stringify(moduleUrl.href)}))` +
    `.catch((error) => { process.nextTick(() => { throw error; }); });`;
  return new Worker(bootstrap, { ...options, eval: true });
}
