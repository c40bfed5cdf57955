import { runCli } from './program.js';
import { processIo } from './run-command.js';

// Entry point of `npm run -s spendmix -- <command>` and of the package bin.
const code = await runCli(process.argv.slice(2), processIo);
process.exitCode = code;
