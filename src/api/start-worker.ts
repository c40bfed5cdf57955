import { Worker, type WorkerOptions } from 'node:worker_threads';

/**
 * Starts a worker thread on a module given by URL, from source or from compiled JavaScript.
 * Node 20 cannot load a .ts module in a Worker by itself, so under tsx or vitest (module URL
 * ending in .ts) the worker starts from a two-line bootstrap that registers tsx's loader and then
 * imports the module; compiled builds (.js, as in the Electron app) start the file directly.
 * (src/model/worker-host.ts bundles its worker with esbuild instead, which is faster to start but
 * cannot carry better-sqlite3's native binding, which every long task needs.)
 */
export function startWorker(moduleUrl: URL, options: Omit<WorkerOptions, 'eval'> = {}): Worker {
  if (!moduleUrl.pathname.endsWith('.ts')) return new Worker(moduleUrl, options);
  const loader = import.meta.resolve('tsx/esm/api');
  const bootstrap =
    `import(${JSON.stringify(loader)})` +
    `.then(({ register }) => { register(); return import(${JSON.stringify(moduleUrl.href)}); })` +
    `.catch((error) => { process.nextTick(() => { throw error; }); });`;
  return new Worker(bootstrap, { ...options, eval: true });
}
