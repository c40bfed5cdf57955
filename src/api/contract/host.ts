import { z } from 'zod';
import { demoCustomerCount } from './export.js';
import { named, nonEmpty } from './fields.js';

/** `serve`: the local browser host's own settings (a command-line tool that starts a host, not an app action). */
export const serveInput = z.strictObject({
  db: named(nonEmpty, 'the database to work on (created when missing)', '--db <file>'),
  port: named(z.number().int().min(0).max(65535).default(0), 'port on 127.0.0.1 (0 picks a free one)', '--port'),
  renderer: named(nonEmpty.optional(), 'folder of the built screens (absent: dist/renderer, made by `npm run build:renderer`)', '--renderer <dir>'),
  demoCustomers: named(demoCustomerCount.optional(), 'size of the demo chain the screens load (absent: 6,000; smaller loads faster)', '--demo-customers'),
});
