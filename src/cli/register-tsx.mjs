// Registers tsx's loader so that the TypeScript sources run without a build step (the package bin,
// `npm run spendmix`, and the worker threads started from source). tsx keeps compiled modules in
// <temp folder>/tsx-<uid> and loads them back on the next start; in a folder another local user
// can write to, they could plant compiled code that would run as us. The cache is used only when
// that folder is private (ours, not writable by others, in a parent nobody else can rename it
// out of); otherwise it is switched off, which costs start-up time but never runs foreign code.
import { lstatSync, mkdirSync, realpathSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';

/** No one but `uid` (and root) can add, replace or rename entries of this folder. */
function closedToOthers(stats, uid) {
  const ownerTrusted = stats.uid === uid || stats.uid === 0;
  const othersMayWrite = (stats.mode & 0o022) !== 0;
  const sticky = (stats.mode & 0o1000) !== 0;
  return ownerTrusted && (!othersMayWrite || sticky);
}

/** True when tsx's cache folder is ours and no other user can change what is in it. */
export function tsxCacheIsPrivate() {
  if (typeof process.geteuid !== 'function') return true; // Windows: the temp folder is per user
  const uid = process.geteuid();
  try {
    const parent = realpathSync(tmpdir());
    for (let folder = parent; ; folder = dirname(folder)) {
      if (!closedToOthers(lstatSync(folder), uid)) return false;
      if (dirname(folder) === folder) break;
    }
    const cache = join(parent, `tsx-${uid}`);
    try {
      mkdirSync(cache, { mode: 0o700 });
    } catch (error) {
      if (error.code !== 'EEXIST') return false;
    }
    const stats = lstatSync(cache);
    return stats.isDirectory() && stats.uid === uid && (stats.mode & 0o022) === 0;
  } catch {
    return false;
  }
}

if (!process.env.TSX_DISABLE_CACHE && !tsxCacheIsPrivate()) process.env.TSX_DISABLE_CACHE = '1';
// tsx reads TSX_DISABLE_CACHE when its loader loads, so it is imported only after the check.
const { register } = await import('tsx/esm/api');
register();
