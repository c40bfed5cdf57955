import { existsSync } from 'node:fs';
import { createRequire } from 'node:module';

/**
 * Where the Electron binary is, or why there is none. The `electron` package resolves to the
 * binary's path, and throws when its install step could not download it (as on machines that
 * install with ELECTRON_SKIP_BINARY_DOWNLOAD=1).
 */
export function findElectronBinary(): { path: string } | { missing: string } {
  try {
    const path = createRequire(import.meta.url)('electron') as unknown;
    if (typeof path !== 'string') return { missing: 'the electron package did not give a binary path' };
    if (!existsSync(path)) return { missing: `the Electron binary ${path} does not exist` };
    return { path };
  } catch (error) {
    return { missing: error instanceof Error ? error.message : String(error) };
  }
}
