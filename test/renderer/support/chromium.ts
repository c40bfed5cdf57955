import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { chromium, type BrowserContext } from 'playwright-core';

/** Debian's Chromium, launched as DEVELOPERS.md says (never a downloaded browser). */
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

/** A Chromium with a fresh user-data-dir, so no earlier run's cache or storage leaks in. */
export async function launchFreshChromium(viewport = { width: 1440, height: 900 }): Promise<BrowserContext> {
  const userDataDir = mkdtempSync(join(tmpdir(), 'spendmix-chromium-'));
  return chromium.launchPersistentContext(userDataDir, {
    executablePath: chromiumPath,
    args: chromiumArgs,
    headless: true,
    viewport,
    locale: 'en-GB',
  });
}
