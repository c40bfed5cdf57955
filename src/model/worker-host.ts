import { createRequire } from 'node:module';
import { pathToFileURL } from 'node:url';
import { Worker, type WorkerOptions } from 'node:worker_threads';

/**
 * Starts a worker thread on the module next to the caller. Compiled (.js) code starts the .js
 * file directly. From source (tsx, vitest) Node cannot load a .ts worker by itself, so the
 * worker runs a tiny bootstrap that registers tsx's ESM loader and then imports the .ts module.
 */
export function startModuleWorker(callerUrl: string, moduleBaseName: string, options: WorkerOptions): Worker {
  const fromSource = callerUrl.endsWith('.ts');
  const moduleUrl = new URL(`./${moduleBaseName}${fromSource ? '.ts' : '.js'}`, callerUrl);
  if (!fromSource) return new Worker(moduleUrl, options);
  // The package's ESM entry of tsx/esm/api sits beside the CommonJS one that require resolves.
  const tsxApi = pathToFileURL(createRequire(callerUrl).resolve('tsx/esm/api').replace(/\.cjs$/, '.mjs')).href;
  const bootstrap = `import(${JSON.stringify(tsxApi)}).then((api) => { api.register(); return import(${JSON.stringify(moduleUrl.href)}); });`;
  return new Worker(bootstrap, { ...options, eval: true });
}
