import { mkdirSync, mkdtempSync, writeFileSync } from 'node:fs';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { runCli } from '../../src/cli/program.js';
import type { CliIo } from '../../src/cli/run-command.js';

function capture(): CliIo & { out: string; err: string } {
  const io = { out: '', err: '', stdout: (text: string) => void (io.out += text), stderr: (text: string) => void (io.err += text) };
  return io;
}

describe('spendmix serve: bad input', () => {
  const folder = mkdtempSync(join(tmpdir(), 'spendmix-serve-'));
  const db = join(folder, 'serve.db');
  const renderer = join(folder, 'renderer');
  mkdirSync(renderer);
  writeFileSync(join(renderer, 'index.html'), '<!doctype html><div id="root"></div>');

  it('needs --db, and says so with exit code 2', async () => {
    const io = capture();
    expect(await runCli(['serve', '--json'], io)).toBe(2);
    expect(io.err).toMatch(/the database to work on \(db, --db\) is required/);
    expect(io.out).toBe('');
  });

  it('refuses a port outside 0–65535 and a port already in use, with exit code 2', async () => {
    const io = capture();
    expect(await runCli(['serve', '--db', db, '--port', '70000'], io)).toBe(2);
    expect(io.err).toMatch(/port on 127\.0\.0\.1 \(port, --port\) must be at most 65535 \(got 70000\)/);

    const blocker = createServer();
    await new Promise<void>((resolve) => blocker.listen(0, '127.0.0.1', resolve));
    const port = (blocker.address() as { port: number }).port;
    try {
      const busy = capture();
      expect(await runCli(['serve', '--db', db, '--renderer', renderer, '--port', String(port), '--json'], busy)).toBe(2);
      expect(busy.err).toMatch(new RegExp(`Port ${port} on 127.0.0.1 is in use`));
    } finally {
      blocker.close();
    }
  });

  it('says how to build the screens when they are not built', async () => {
    const io = capture();
    expect(await runCli(['serve', '--db', db, '--renderer', join(folder, 'not-built')], io)).toBe(2);
    expect(io.err).toMatch(/npm run build:renderer/);
  });
});
