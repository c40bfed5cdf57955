import { existsSync, mkdirSync, readFileSync, renameSync, writeFileSync } from 'node:fs';
import { dirname } from 'node:path';

/** How many databases the File › Open Recent menu lists. */
export const RECENT_LIMIT = 8;

/**
 * The recent databases list, kept as JSON in the user's data folder. A missing or damaged file
 * is an empty list (it is only a convenience); writes go through a temporary file and a rename.
 */
export class RecentDatabases {
  constructor(private readonly file: string) {}

  list(): string[] {
    if (!existsSync(this.file)) return [];
    try {
      const parsed = JSON.parse(readFileSync(this.file, 'utf8')) as unknown;
      return Array.isArray(parsed) ? parsed.filter((entry): entry is string => typeof entry === 'string').slice(0, RECENT_LIMIT) : [];
    } catch {
      return [];
    }
  }

  /** Moves (or adds) a path to the top of the list. */
  remember(path: string): string[] {
    const next = [path, ...this.list().filter((entry) => entry !== path)].slice(0, RECENT_LIMIT);
    mkdirSync(dirname(this.file), { recursive: true });
    const temporary = `${this.file}.tmp`;
    writeFileSync(temporary, JSON.stringify(next, null, 2));
    renameSync(temporary, this.file);
    return next;
  }
}
