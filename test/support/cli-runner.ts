/**
 * Test support: the `spendmix` command line run in-process, as `npm run -s spendmix -- …argv`
 * would run it, with its output captured. Tests and benchmarks that act as an analyst go through
 * here, so they use the same commands, validation and JSON as a user.
 */
import type { ImportResult } from '../../src/api/contract.js';
import { cli } from './run-cli.js';

/** What `import --json` prints (DESIGN.md §10). */
export type ImportJson = Omit<ImportResult, 'importId'>;

/** Runs one command line (without `spendmix`) and returns its exit code and output. */
export const runSpendmix = cli;

/** Runs a command with `--json` and returns the one JSON object it prints; a failure throws with its message. */
export async function spendmixJson<T>(...argv: string[]): Promise<T> {
  const outcome = await runSpendmix(...argv, '--json');
  if (outcome.code !== 0) {
    throw new Error(`spendmix ${argv.join(' ')} exited with ${outcome.code}: ${outcome.stderr.trim() || outcome.stdout.trim()}`);
  }
  return JSON.parse(outcome.stdout) as T;
}
