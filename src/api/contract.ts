/**
 * The one typed contract between the screens, the command line and the core (DESIGN.md §2),
 * split by area under ./contract/:
 * - fields.ts: building blocks (names in words and flags, dates, plain text);
 * - settings.ts: every setting of a run and of the fit-matrix tool — the only source of their
 *   limits and defaults;
 * - sources, runs, segments, certainty, review, movement, export: each screen's inputs and outputs;
 *   host.ts: the browser host's own settings (`serve`); warehouse.ts: SQL for the chain's engine;
 * - tasks.ts: long tasks and their events; methods.ts: the method table; shell.ts: transports.
 *
 * Every UI action is one method: a zod schema validates its input at the boundary (IPC, HTTP,
 * CLI) and a TypeScript type describes its output. Outputs are plain JSON (no typed arrays, no
 * Dates) because they cross IPC and HTTP unchanged. These files import nothing but zod: the
 * renderer and the core import their types.
 */
export * from './contract/fields.js';
export * from './contract/settings.js';
export * from './contract/database.js';
export * from './contract/sources.js';
export * from './contract/runs.js';
export * from './contract/segments.js';
export * from './contract/certainty.js';
export * from './contract/review.js';
export * from './contract/movement.js';
export * from './contract/export.js';
export * from './contract/host.js';
export * from './contract/warehouse.js';
export * from './contract/tasks.js';
export * from './contract/methods.js';
export * from './contract/shell.js';
