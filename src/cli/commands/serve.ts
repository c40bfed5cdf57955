import { resolve } from 'node:path';
import { parseInput } from '../../api/api-errors.js';
import { DEFAULT_MAX_UPLOAD_MIB, serveInput } from '../../api/contract.js';
import { startHost, type RunningHost } from '../../api/http-host.js';
import { defaultRendererDir } from '../../api/package-root.js';
import { ApiSession } from '../../api/session.js';
import { runCommand, type RegisterCommand } from '../run-command.js';
import { addSchemaOptions, inputFromFlags, schemaOptions } from '../schema-options.js';

const serveFlags = schemaOptions(serveInput.shape);

/** Resolves once the process is asked to stop (Ctrl+C or a terminating signal). */
function untilStopped(): Promise<string> {
  return new Promise((done) => {
    const stop = (signal: string) => {
      process.off('SIGINT', onInt);
      process.off('SIGTERM', onTerm);
      done(signal);
    };
    const onInt = () => stop('SIGINT');
    const onTerm = () => stop('SIGTERM');
    process.on('SIGINT', onInt);
    process.on('SIGTERM', onTerm);
  });
}

/**
 * `spendmix serve --db FILE [--port N]`: the local browser host (DESIGN.md §10, §12). Prints
 * `{url}` once listening, then serves until stopped; running tasks are cancelled on the way out.
 */
export const registerServe: RegisterCommand = (program, io, setExitCode) => {
  addSchemaOptions(
    program.command('serve').description('Serve the Spendmix screens and API to a browser on this machine (127.0.0.1 only) until stopped.'),
    serveFlags,
  )
    .option('--json', 'print one JSON object {url} once listening')
    .addHelpText(
      'after',
      '\nOpen the printed address (it carries the session token) in a browser; every /api/ request needs that token.\n' +
        'The host works on the --db database only, reads only files uploaded into its private session folder\n' +
        `(up to --max-upload-mib each, default ${DEFAULT_MAX_UPLOAD_MIB} MiB), and hands exports to the browser as downloads.`,
    )
    .action(async (flags: Record<string, unknown>) => {
      const json = Boolean(flags.json);
      let host: RunningHost | undefined;
      let session: ApiSession | undefined;
      const code = await runCommand(io, json, async () => {
        const options = parseInput('serve', serveInput, inputFromFlags(serveFlags, flags));
        session = new ApiSession({ dbPath: options.db, shell: 'browser', demoCustomers: options.demoCustomers });
        try {
          host = await startHost({
            session,
            port: options.port,
            rendererDir: options.renderer ? resolve(options.renderer) : defaultRendererDir(),
            maxUploadBytes: options.maxUploadMib * 2 ** 20,
          });
        } catch (error) {
          await session.close();
          throw error;
        }
        return {
          result: { url: host.url },
          human: ({ url }) =>
            `Spendmix is serving ${session!.dbPath} at\n  ${url}\nOpen it in a browser; press Ctrl+C to stop. ` +
            `Files are uploaded for import (up to ${options.maxUploadMib.toLocaleString('en-GB')} MiB each) and exports downloaded.`,
        };
      });
      if (host && session) {
        await untilStopped();
        await host.close();
        await session.close();
      }
      setExitCode(code);
    });
};
