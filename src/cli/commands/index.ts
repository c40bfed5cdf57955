import type { RegisterCommand } from '../run-command.js';
import { registerDemo } from './demo.js';
import { registerExport } from './export.js';
import { registerFeaturesSql } from './features-sql.js';
import { registerFitMatrix } from './fit-matrix.js';
import { registerImport } from './import.js';
import { registerModelSql } from './model-sql.js';
import { registerRefresh } from './refresh.js';
import { registerReview } from './review.js';
import { registerRuns } from './runs.js';
import { registerSegments } from './segments.js';
import { registerServe } from './serve.js';

/** Every CLI command, in the order `--help` lists them. Add a command by adding its module here. */
export const commandModules: RegisterCommand[] = [
  registerDemo,
  registerImport,
  registerFitMatrix,
  registerRefresh,
  registerRuns,
  registerSegments,
  registerReview,
  registerExport,
  registerFeaturesSql,
  registerModelSql,
  registerServe,
];
