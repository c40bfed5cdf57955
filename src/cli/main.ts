import { runCli } from './program.js';
import { processIo } from './run-command.js';

// A reader that stops early (`spendmix runs --db x | head -3`) closes the pipe: stop quietly with the
// command's own exit code, as shell tools do, instead of an unhandled-error trace. The command's
// work is done by the time it prints.
for (const stream of [process.stdout, process.stderr]) {
  stream.on('error', (error: NodeJS.ErrnoException) => {
    if (error.code !== 'EPIPE') throw error;
    process.exit(process.exitCode ?? 0);
  });
}

// Entry point of `npm run -s spendmix -- <command>` and of the package bin.
const code = await runCli(process.argv.slice(2), processIo);
process.exitCode = code;
