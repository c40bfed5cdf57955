import { Command, CommanderError } from 'commander';
import { commandModules } from './commands/index.js';
import { EXIT_BAD_INPUT, EXIT_OK, reportError, type CliIo } from './run-command.js';

/**
 * Builds the `spendmix` program. Commander's own usage errors (unknown option, missing value)
 * are bad input: exit code 2 with commander's message and a pointer to --help.
 */
export function buildProgram(io: CliIo, setExitCode: (code: number) => void): Command {
  const program = new Command('spendmix')
    .description('Spend-tier segmentation of loyalty-card customers with Gaussian mixtures.')
    .showHelpAfterError('(run with --help for usage)')
    .configureOutput({ writeOut: io.stdout, writeErr: io.stderr })
    .exitOverride();
  for (const register of commandModules) register(program, io, setExitCode);
  program.commands.forEach((command) => command.exitOverride());
  return program;
}

/** Runs the CLI on argv (without node and script) and resolves to the process exit code. */
export async function runCli(argv: string[], io: CliIo): Promise<number> {
  let exitCode = EXIT_OK;
  const program = buildProgram(io, (code) => {
    exitCode = code;
  });
  try {
    await program.parseAsync(argv, { from: 'user' });
    return exitCode;
  } catch (error) {
    if (error instanceof CommanderError) {
      if (error.code === 'commander.helpDisplayed' || error.code === 'commander.version' || error.code === 'commander.help') {
        return EXIT_OK;
      }
      return EXIT_BAD_INPUT;
    }
    return reportError(io, argv.includes('--json'), error);
  }
}
