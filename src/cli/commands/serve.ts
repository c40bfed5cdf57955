import { resolve } from 'node:path';
import { DEFAULT_MAX_UPLOAD_BYTES, startHost, type RunningHost } from '../../api/http-host.js';
import { defaultRendererDir } from '../../api/package-root.js';
import { ApiSession } from '../../api/session.js';
import { InputError } from '../../errors.js';
import { parseInteger, runCommand, type RegisterCommand } from '../run-command.js';

interface ServeOptions {
  db?: string;
  port: number;
  renderer?: string;
  demoCustomers?: number;
  maxUploadMib: number;
  json?: boolean;
}

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
  program
    .command('serve')
    .description('Serve the Spendmix screens and API to a browser on this machine (127.0.0.1 only) until stopped.')
    .option('--db <file>', 'database to work on; created when missing')
    .option('--port <n>', 'port on 127.0.0.1; 0 picks a free one', parseInteger('--port', 0, 65535), 0)
    .option('--renderer <dir>', 'folder of the built screens (default: dist/renderer, made by `npm run build:renderer`)')
    .option('--demo-customers <n>', 'size of the demo chain the screens load (default 6,000; smaller loads faster)', parseInteger('--demo-customers', 50, 200_000))
    .option(
      '--max-upload-mib <n>',
      'largest file the screens may upload for an import, in MiB',
      parseInteger('--max-upload-mib', 1, 1024 * 1024),
      DEFAULT_MAX_UPLOAD_BYTES / 2 ** 20,
    )
    .option('--json', 'print one JSON object {url} once listening')
    .addHelpText(
      'after',
      '\nOpen the printed address (it carries the session token) in a browser; every /api/ request needs that token.\n' +
        'The host works on the --db database only, reads only files uploaded into its private session folder\n' +
        '(up to --max-upload-mib each, default 2048 = 2 GiB), and hands exports to the browser as downloads.',
    )
    .action(async (options: ServeOptions) => {
      const json = Boolean(options.json);
      let host: RunningHost | undefined;
      let session: ApiSession | undefined;
      const code = await runCommand(io, json, async () => {
        if (!options.db) throw new InputError('serve needs --db FILE: the database to work on (created when missing).');
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
