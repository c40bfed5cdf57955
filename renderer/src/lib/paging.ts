/**
 * Page bookkeeping for virtualised tables over the core's paged methods: the table knows the
 * total, the virtualiser says which rows are on screen, and only the pages covering them are
 * fetched. Memory stays bounded by evicting the pages farthest from view.
 */
export function pagesForRange(firstRow: number, lastRow: number, pageSize: number, total: number): number[] {
  if (!Number.isInteger(pageSize) || pageSize < 1) throw new RangeError(`Page size must be a positive integer, got ${pageSize}.`);
  if (total <= 0 || lastRow < firstRow) return [];
  const first = Math.max(0, Math.floor(Math.max(0, firstRow) / pageSize));
  const last = Math.min(Math.ceil(total / pageSize) - 1, Math.floor(Math.min(total - 1, lastRow) / pageSize));
  const pages: number[] = [];
  for (let page = first; page <= last; page++) pages.push(page);
  return pages;
}

/** Pages to drop so that at most `keep` remain, farthest from the visible centre first. */
export function pagesToEvict(cached: Iterable<number>, visiblePages: number[], keep: number): number[] {
  const pages = [...cached];
  if (pages.length <= keep) return [];
  const centre = visiblePages.length ? (visiblePages[0] + visiblePages[visiblePages.length - 1]) / 2 : 0;
  const visible = new Set(visiblePages);
  return pages
    .filter((page) => !visible.has(page))
    .sort((a, b) => Math.abs(b - centre) - Math.abs(a - centre) || b - a)
    .slice(0, pages.length - keep);
}
