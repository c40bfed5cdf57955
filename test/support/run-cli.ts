import { runCli } from '../../src/cli/program.js';

export interface CliRun {
  code: number;
  stdout: string;
  stderr: string;
}

/** Runs the CLI in-process, as `npm run -s spendmix -- …argv` would, capturing its output. */
export async function cli(...argv: string[]): Promise<CliRun> {
  let stdout = '';
  let stderr = '';
  const code = await runCli(argv, { stdout: (text) => void (stdout += text), stderr: (text) => void (stderr += text) });
  return { code, stdout, stderr };
}
