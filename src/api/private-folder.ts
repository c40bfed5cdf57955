import { lstatSync, mkdtempSync, realpathSync, type Stats } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { InputError } from '../errors.js';

const ownUid = typeof process.geteuid === 'function' ? process.geteuid() : null;

/** Nobody but us (and root) can add, replace or rename entries of a folder with these stats. */
function onlyOwnerCanChange(stats: Stats): boolean {
  if (ownUid === null) return true; // Windows: the temp folder is per user
  const trustedOwner = stats.uid === ownUid || stats.uid === 0;
  const othersMayWrite = (stats.mode & 0o022) !== 0;
  const sticky = (stats.mode & 0o1000) !== 0;
  return trustedOwner && (!othersMayWrite || sticky);
}

/** The first folder from `folder` up to the root that another user could change, or null. */
function folderOthersControl(folder: string): string | null {
  for (let current = folder; ; current = dirname(current)) {
    if (!onlyOwnerCanChange(lstatSync(current))) return current;
    if (dirname(current) === current) return null;
  }
}

/**
 * Creates a fresh folder that only this user can enter (mode 0700, owner checked after creation)
 * in the temp folder, for files a session keeps for itself (uploads, exports waiting to be
 * downloaded). Refused when another local user could swap the folder for one of theirs: a parent
 * they own, or one they may write to without the sticky bit.
 */
export function createPrivateFolder(prefix: string, parent: string = tmpdir()): string {
  const base = realpathSync(parent);
  const exposed = folderOthersControl(base);
  if (exposed) {
    throw new InputError(
      `${exposed} can be changed by other users of this computer, so Spendmix keeps no session files under it; ` +
        'set TMPDIR to a folder of your own and start again.',
    );
  }
  const folder = mkdtempSync(join(base, prefix));
  const stats = lstatSync(folder);
  if (!stats.isDirectory() || (ownUid !== null && (stats.uid !== ownUid || (stats.mode & 0o077) !== 0))) {
    throw new Error(`The new session folder ${folder} is not private (owner ${stats.uid}, mode ${(stats.mode & 0o777).toString(8)}).`);
  }
  return folder;
}
