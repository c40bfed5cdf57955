import { existsSync, readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

let cached: { root: string; version: string } | null = null;

/**
 * Spendmix's own package folder and version, found by walking up from this module to the
 * package.json named "spendmix": the same code runs from the checkout (src/api) and from the
 * compiled app (dist/src/api).
 */
function findPackage(): { root: string; version: string } {
  if (cached) return cached;
  let folder = dirname(fileURLToPath(import.meta.url));
  for (;;) {
    const candidate = join(folder, 'package.json');
    if (existsSync(candidate)) {
      const manifest = JSON.parse(readFileSync(candidate, 'utf8')) as { name?: string; version?: string };
      if (manifest.name === 'spendmix') return (cached = { root: folder, version: manifest.version ?? '0.0.0' });
    }
    const parent = dirname(folder);
    if (parent === folder) throw new Error(`Cannot find Spendmix's package.json above ${fileURLToPath(import.meta.url)}.`);
    folder = parent;
  }
}

export function packageRoot(): string {
  return findPackage().root;
}

export function appVersion(): string {
  return findPackage().version;
}

/** Where `npm run build:renderer` puts the built screens. */
export function defaultRendererDir(): string {
  return join(packageRoot(), 'dist', 'renderer');
}
