import { z } from 'zod';
import { demoCustomerCount } from './export.js';
import { named, nonEmpty } from './fields.js';

/** The browser host's default upload limit: 2 GiB, room for a year of a regional chain's receipts. */
export const DEFAULT_MAX_UPLOAD_MIB = 2048;

/** `serve`: the local browser host's own settings (a command-line tool that starts a host, not an app action). */
export const serveInput = z.strictObject({
  db: named(nonEmpty, 'the database to work on (created when missing)', '--db <file>'),
  port: named(z.number().int().min(0).max(65535).default(0), 'port on 127.0.0.1 (0 picks a free one)', '--port'),
  renderer: named(nonEmpty.optional(), 'folder of the built screens (absent: dist/renderer, made by `npm run build:renderer`)', '--renderer <dir>'),
  demoCustomers: named(demoCustomerCount.optional(), 'size of the demo chain the screens load (absent: 6,000; smaller loads faster)', '--demo-customers'),
  maxUploadMib: named(
    z.number().int().min(1).max(1024 * 1024).default(DEFAULT_MAX_UPLOAD_MIB),
    'largest file the screens may upload for an import, in MiB',
    '--max-upload-mib',
  ),
});
