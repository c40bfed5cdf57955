import { availableParallelism } from 'node:os';
import type { Worker } from 'node:worker_threads';
import { CancelledError, InputError, throwIfAborted } from '../errors.js';
import { chunkCount, combineChunks, expectationChunks, expectationTerms, statisticsModeOf, type ChunkPartials, type ExpectationSummary } from './estep.js';
import { fitRestart, prepareFit, prepareFitContext, restartSteps, summarizeRestarts, sweepRowOf, type FitContext, type RestartOutcome } from './em.js';
import { resolveFitOptions, checkCells, checkEnoughRows, checkFeatureVariance, checkShape, type ResolvedFitOptions } from './validate.js';
import { startModuleWorker } from './worker-host.js';
import type { WorkerData, WorkerReply, WorkerRequest } from './worker-protocol.js';
import type { DataMatrix, FitOptions, FitProgress, FitResult, SweepOptions, SweepResult } from './types.js';

type RequestBody = WorkerRequest extends infer R ? (R extends WorkerRequest ? Omit<R, 'id'> : never) : never;

interface Pending {
  resolve: (value: unknown) => void;
  reject: (error: Error) => void;
  onProgress?: (progress: FitProgress) => void;
}

/** Where restarts and E-steps run: worker threads, or this thread for work too small to ship. */
interface TaskRunner {
  readonly size: number;
  run<T>(body: RequestBody, onProgress?: (progress: FitProgress) => void): Promise<T>;
  runOn<T>(worker: number, body: RequestBody): Promise<T>;
  fail(error: Error): void;
  close(): Promise<void>;
}

/**
 * Runs the same requests as a worker would, on this thread, one at a time with a pause for the
 * event loop before each (so an abort in between is seen).
 */
class InThreadRunner implements TaskRunner {
  readonly size = 1;
  private failure: Error | null = null;

  constructor(
    private readonly context: FitContext,
    private readonly signal: AbortSignal | undefined,
  ) {}

  async run<T>(body: RequestBody, onProgress?: (progress: FitProgress) => void): Promise<T> {
    await new Promise((resolve) => setImmediate(resolve));
    if (this.failure) throw this.failure;
    if (body.type === 'restarts') return body.runs.map(({ options, restart }) => fitRestart(this.context, options, restart, this.signal, onProgress)) as T;
    const { model, statistics, firstChunk, lastChunk } = body;
    return expectationChunks(this.context.values, this.context.rows, expectationTerms(model), statistics, firstChunk, lastChunk, null) as T;
  }

  runOn<T>(_worker: number, body: RequestBody): Promise<T> {
    return this.run<T>(body);
  }

  fail(error: Error): void {
    this.failure = error;
  }

  async close(): Promise<void> {}
}

/**
 * A fixed set of worker threads sharing one copy of the data (SharedArrayBuffer). `run` sends a
 * request to the next idle worker (queued when all are busy), `runOn` to a given one. Aborting
 * terminates every worker at once and rejects what is pending with CancelledError.
 */
class MixtureWorkerPool implements TaskRunner {
  private readonly idle: number[] = [];
  private readonly waiting: { body: RequestBody; pending: Pending }[] = [];
  private readonly pending = new Map<number, Pending & { worker: number }>();
  private nextId = 1;
  private failure: Error | null = null;
  private closing = false;

  private constructor(private readonly workers: Worker[]) {
    workers.forEach((worker, index) => {
      this.idle.push(index);
      worker.on('message', (reply: WorkerReply) => this.receive(index, reply));
      worker.on('error', (error) => this.fail(error instanceof Error ? error : new Error(String(error))));
      worker.on('exit', (code) => {
        if (code !== 0 && !this.closing) this.fail(new Error(`A fitting worker stopped unexpectedly (exit code ${code}).`));
      });
    });
  }

  static open(data: DataMatrix, anyMissing: boolean, threads: number): MixtureWorkerPool {
    const shared = new Float64Array(new SharedArrayBuffer(data.values.byteLength));
    shared.set(data.values);
    const workerData: WorkerData = { values: shared, rows: data.rows, cols: data.cols, anyMissing };
    const workers = Array.from({ length: threads }, () => startModuleWorker(import.meta.url, 'worker', { workerData }));
    return new MixtureWorkerPool(workers);
  }

  get size(): number {
    return this.workers.length;
  }

  run<T>(body: RequestBody, onProgress?: (progress: FitProgress) => void): Promise<T> {
    return new Promise<T>((resolve, reject) => {
      const pending: Pending = { resolve: resolve as (value: unknown) => void, reject, onProgress };
      if (this.failure) return reject(this.failure);
      const worker = this.idle.shift();
      if (worker === undefined) this.waiting.push({ body, pending });
      else this.send(worker, body, pending);
    });
  }

  runOn<T>(worker: number, body: RequestBody): Promise<T> {
    return new Promise<T>((resolve, reject) => {
      if (this.failure) return reject(this.failure);
      const position = this.idle.indexOf(worker);
      if (position >= 0) this.idle.splice(position, 1);
      this.send(worker, body, { resolve: resolve as (value: unknown) => void, reject });
    });
  }

  private send(worker: number, body: RequestBody, pending: Pending): void {
    const id = this.nextId++;
    this.pending.set(id, { ...pending, worker });
    this.workers[worker].postMessage({ ...body, id } as WorkerRequest);
  }

  private receive(worker: number, reply: WorkerReply): void {
    const pending = this.pending.get(reply.id);
    if (!pending) return;
    if (reply.type === 'progress') {
      pending.onProgress?.(reply.progress);
      return;
    }
    this.pending.delete(reply.id);
    const next = this.waiting.shift();
    if (next) this.send(worker, next.body, next.pending);
    else this.idle.push(worker);
    if (reply.type === 'done') pending.resolve(reply.result);
    else pending.reject(reply.name === 'InputError' ? new InputError(reply.message) : new Error(reply.message));
  }

  fail(error: Error): void {
    if (this.failure) return;
    this.failure = error;
    for (const pending of this.pending.values()) pending.reject(error);
    for (const { pending } of this.waiting) pending.reject(error);
    this.pending.clear();
    this.waiting.length = 0;
    void this.close();
  }

  async close(): Promise<void> {
    this.closing = true;
    await Promise.all(this.workers.map((worker) => worker.terminate()));
  }
}

/**
 * Below this many row-visits per task list (rows × tasks) starting threads costs more than it
 * saves, so the work runs on this thread (same results either way).
 */
const IN_THREAD_WORK = 400_000;

/** Threads to use: the request (0 = this thread), or all cores, and never more than tasks. */
function threadCount(requested: number | undefined, tasks: number, rows: number): number {
  if (requested === undefined && rows * tasks < IN_THREAD_WORK) return 0;
  const threads = requested ?? availableParallelism();
  if (!Number.isInteger(threads) || threads < 0) throw new InputError(`threads must be a whole number ≥ 0 (0: this thread); got ${threads}.`);
  return threads === 0 ? 0 : Math.max(1, Math.min(threads, tasks));
}

/** Opens a runner for the signal's lifetime: aborting terminates the workers, closing always follows. */
async function withPool<T>(
  context: FitContext,
  data: DataMatrix,
  threads: number,
  signal: AbortSignal | undefined,
  body: (pool: TaskRunner) => Promise<T>,
): Promise<T> {
  throwIfAborted(signal);
  const pool: TaskRunner = threads === 0 ? new InThreadRunner(context, signal) : MixtureWorkerPool.open(data, context.patterns !== null, threads);
  const onAbort = () => pool.fail(new CancelledError());
  signal?.addEventListener('abort', onAbort, { once: true });
  try {
    return await body(pool);
  } finally {
    signal?.removeEventListener('abort', onAbort);
    await pool.close();
  }
}

/**
 * Drives one restart with its E-steps split over every worker by row chunks (for a single
 * restart on big data). Chunk partials are combined in chunk order, so the result has the bits
 * of the single-thread fit.
 */
async function fitRestartSplitRows(
  pool: TaskRunner,
  context: FitContext,
  options: ResolvedFitOptions,
  restart: number,
  signal?: AbortSignal,
  onProgress?: (progress: FitProgress) => void,
): Promise<RestartOutcome> {
  const chunks = chunkCount(context.rows);
  const share = Math.ceil(chunks / pool.size);
  const steps = restartSteps(context, options, restart, signal, onProgress);
  let step = steps.next();
  while (!step.done) {
    const { model, statistics } = step.value;
    const requests: Promise<ChunkPartials>[] = [];
    for (let worker = 0; worker < pool.size && worker * share < chunks; worker++) {
      requests.push(
        pool.runOn<ChunkPartials>(worker, {
          type: 'expectation',
          model,
          statistics: statisticsModeOf(statistics),
          firstChunk: worker * share,
          lastChunk: Math.min(chunks, (worker + 1) * share),
        }),
      );
    }
    const summary: ExpectationSummary = combineChunks(await Promise.all(requests), statistics);
    step = steps.next(summary);
  }
  return step.value;
}

/**
 * fitMixture on worker threads: restarts spread over the workers, or — with fewer restarts than
 * threads and no missing values — each restart's E-steps split over the workers by rows. Same
 * result, bit for bit, as fitMixture with the same options.
 */
export async function fitMixtureParallel(data: DataMatrix, options: FitOptions & { threads?: number }): Promise<FitResult> {
  const { resolved, context } = prepareFit(data, options);
  const anyMissing = context.patterns !== null;
  const splitRows = !anyMissing && resolved.restarts < (options.threads ?? availableParallelism()) && chunkCount(data.rows) > 1;
  const threads = threadCount(options.threads, splitRows ? chunkCount(data.rows) : resolved.restarts, data.rows);
  return withPool(context, data, threads, options.signal, async (pool) => {
    const outcomes: RestartOutcome[] = [];
    if (splitRows) {
      for (let restart = 0; restart < resolved.restarts; restart++) {
        outcomes.push(await fitRestartSplitRows(pool, context, resolved, restart, options.signal, options.onProgress));
      }
    } else {
      const runs = Array.from({ length: resolved.restarts }, (_, restart) =>
        pool.run<RestartOutcome[]>({ type: 'restarts', runs: [{ options: resolved, restart }] }, options.onProgress),
      );
      outcomes.push(...(await Promise.all(runs)).flat());
    }
    return summarizeRestarts(outcomes, resolved, data.rows, data.cols);
  });
}

/**
 * The error when no fit of a sweep may compete: what was wrong with the simplest one, and what
 * to change.
 */
export function everyFitRefused(table: SweepResult['table']): InputError {
  const first = table[0];
  return new InputError(
    `Every fit was refused: each has a component too small to estimate its covariance ` +
      `(for example k = ${first.k} ${first.covariance}: ${first.refused}). ` +
      'Try fewer components, other features, or a larger regularisation.',
    { refused: table.map((row) => ({ k: row.k, covariance: row.covariance, reason: row.refused })) },
  );
}

/**
 * Fits every (structure, k) of the grid — each restart a task on the worker threads, the
 * larger k first so the threads finish together — and returns the table and the winner by the
 * criterion among the fits not refused (lowest; the first in table order on ties); InputError
 * when every fit is refused. Each cell equals fitMixture's result.
 */
export async function sweepMixtures(data: DataMatrix, options: SweepOptions): Promise<SweepResult> {
  const [minK, maxK] = options.componentRange ?? [];
  if (!Number.isInteger(minK) || !Number.isInteger(maxK) || minK < 1 || maxK < minK) {
    throw new InputError(`componentRange must be two whole numbers [min, max] with 1 ≤ min ≤ max; got [${minK}, ${maxK}].`);
  }
  const structures = [...new Set(options.covarianceTypes)];
  if (structures.length === 0) throw new InputError('Choose at least one covariance structure for the sweep.');
  const { criterion } = options;
  if (criterion !== 'bic' && criterion !== 'icl') throw new InputError(`Unknown criterion "${String(criterion)}"; use bic or icl.`);
  const cells: ResolvedFitOptions[] = [];
  for (const covarianceType of structures) {
    for (let k = minK; k <= maxK; k++) cells.push(resolveFitOptions({ ...options, components: k, covarianceType }));
  }
  checkShape(data);
  const anyMissing = checkCells(data, cells[0].missing);
  checkFeatureVariance(data);
  for (const cell of cells) checkEnoughRows(data.rows, data.cols, cell);
  const context = prepareFitContext(data, anyMissing);

  // One task per (k, restart) holding every structure: they share one k-means start on their
  // thread. Larger k first, so the threads finish together.
  const tasks: { k: number; restart: number; cells: number[] }[] = [];
  cells.forEach((cell, index) => {
    for (let restart = 0; restart < cell.restarts; restart++) {
      let task = tasks.find((entry) => entry.k === cell.components && entry.restart === restart);
      if (!task) tasks.push((task = { k: cell.components, restart, cells: [] }));
      task.cells.push(index);
    }
  });
  tasks.sort((a, b) => b.k - a.k || a.restart - b.restart);
  return withPool(context, data, threadCount(options.threads, tasks.length, data.rows * structures.length), options.signal, async (pool) => {
    const outcomes = cells.map((): RestartOutcome[] => []);
    await Promise.all(
      tasks.map(async (task) => {
        const results = await pool.run<RestartOutcome[]>(
          { type: 'restarts', runs: task.cells.map((index) => ({ options: cells[index], restart: task.restart })) },
          options.onProgress,
        );
        results.forEach((outcome, position) => outcomes[task.cells[position]].push(outcome));
      }),
    );
    const fits = cells.map((cell, index) => summarizeRestarts(outcomes[index], cell, data.rows, data.cols));
    const table = fits.map(sweepRowOf);
    let bestIndex = -1;
    table.forEach((row, index) => {
      if (row.refused === null && (bestIndex < 0 || row[criterion] < table[bestIndex][criterion])) bestIndex = index;
    });
    if (bestIndex < 0) throw everyFitRefused(table);
    return { table, best: fits[bestIndex], bestRow: table[bestIndex], criterion };
  });
}
