/**
 * Runs the CLI (arguments as given) and reports the process's peak resident memory on stderr as
 * its last line, `peak-rss-bytes N` (process.resourceUsage: the whole process, worker threads
 * included). A process killed by V8 for running out of heap prints no such line.
 */
import { runCli } from '../../src/cli/program.js';
import { processIo } from '../../src/cli/run-command.js';

process.on('exit', () => {
  process.stderr.write(`\npeak-rss-bytes ${process.resourceUsage().maxRSS * 1024}\n`);
});
process.exitCode = await runCli(process.argv.slice(2), processIo);
