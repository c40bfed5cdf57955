import { runCli } from '../../src/cli/program.js';
import type { CliIo } from '../../src/cli/run-command.js';

export interface Captured {
  code: number;
  stdout: string;
  stderr: string;
}

/** Runs the CLI in-process, as `npm run -s spendmix -- …argv` would, capturing its output. */
export async function cli(...argv: string[]): Promise<Captured> {
  let stdout = '';
  let stderr = '';
  const io: CliIo = { stdout: (text) => void (stdout += text), stderr: (text) => void (stderr += text) };
  const code = await runCli(argv, io);
  return { code, stdout, stderr };
}
