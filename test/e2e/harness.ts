import { spawn, type ChildProcess } from 'node:child_process';
import { mkdirSync, mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { chromium, type BrowserContext, type Page } from 'playwright-core';

export const projectRoot = fileURLToPath(new URL('../..', import.meta.url));
/** Screenshots land here (git-ignored). */
export const artifactsDir = join(projectRoot, 'test-artifacts');

/** Debian's Chromium with the flags this machine needs (no network, no sandbox as root). */
export const chromiumPath = '/usr/bin/chromium';
export const chromiumArgs = [
  '--headless',
  '--no-sandbox',
  '--disable-gpu',
  '--disable-background-networking',
  '--disable-component-update',
  '--disable-sync',
  '--no-first-run',
];

export interface ServedApp {
  url: string;
  stop(): Promise<void>;
  /** Everything the host wrote to stderr, for failure messages. */
  stderr(): string;
}

/**
 * Starts the real `spendmix serve` command (as `npm run serve` does, without the build step the
 * test script has already run) and resolves with the `{url}` it prints.
 */
export function serve(dbPath: string, extraArgs: string[] = []): Promise<ServedApp> {
  const child: ChildProcess = spawn(
    process.execPath,
    ['--import', 'tsx', join(projectRoot, 'src/cli/main.ts'), 'serve', '--db', dbPath, '--json', ...extraArgs],
    { cwd: projectRoot, stdio: ['ignore', 'pipe', 'pipe'] },
  );
  let out = '';
  let err = '';
  child.stderr!.on('data', (chunk: Buffer) => {
    err += chunk.toString('utf8');
  });
  return new Promise((resolve, reject) => {
    child.once('exit', (code) => reject(new Error(`serve exited with ${code} before listening:\n${err}`)));
    child.stdout!.on('data', (chunk: Buffer) => {
      out += chunk.toString('utf8');
      const line = out.split('\n').find((text) => text.startsWith('{'));
      if (!line) return;
      const { url } = JSON.parse(line) as { url: string };
      child.removeAllListeners('exit');
      resolve({
        url,
        stderr: () => err,
        stop: () =>
          new Promise<void>((done) => {
            if (child.exitCode !== null) return done();
            child.once('exit', () => done());
            child.kill('SIGTERM');
          }),
      });
    });
  });
}

/** A fresh Chromium profile in a new user-data-dir. */
export async function openBrowser(): Promise<{ context: BrowserContext; page: Page; close: () => Promise<void> }> {
  const userDataDir = mkdtempSync(join(tmpdir(), 'spendmix-chromium-'));
  const context = await chromium.launchPersistentContext(userDataDir, {
    executablePath: chromiumPath,
    args: chromiumArgs,
    headless: true,
    viewport: { width: 1440, height: 960 },
    locale: 'en-GB',
  });
  const page = context.pages()[0] ?? (await context.newPage());
  return { context, page, close: () => context.close() };
}

/** Page errors and console errors seen so far; the test asserts there are none. */
export function collectPageErrors(page: Page): string[] {
  const errors: string[] = [];
  page.on('pageerror', (error) => errors.push(`page error: ${error.message}`));
  page.on('console', (message) => {
    if (message.type() === 'error') errors.push(`console error: ${message.text()}`);
  });
  return errors;
}

export async function screenshot(page: Page, name: string): Promise<string> {
  mkdirSync(artifactsDir, { recursive: true });
  const path = join(artifactsDir, `${name}.png`);
  await page.screenshot({ path, fullPage: true });
  return path;
}
