/**
 * Which earlier segment each segment of a run continues (DESIGN.md §6), by one rule for a refit
 * against last month and for a regroup of a stored run: match the segments that share the most
 * customers. Over the customers placed in both, the Hungarian algorithm (minimum-cost assignment,
 * src/model) pairs earlier and current segments at cost −|customers in both|; a pair counts as a
 * continuation only when its common customers are at least half of either side's (of the earlier
 * segment's customers among the common ones, or of the current one's). Unpaired earlier segments
 * are retired, unpaired current ones new.
 */
import { costMatrixFromRows, minimumCostAssignment } from '../model/index.js';

/** A pair continues only when it shares at least this share of either side's common customers. */
export const CONTINUATION_SHARE = 0.5;

/**
 * `counts[i][j]`: customers in earlier segment i and current segment j (placed in both). Returns
 * for each current segment the earlier segment it continues, or null.
 */
export function continuations(counts: readonly (readonly number[])[], currentCount: number): (number | null)[] {
  const continues = new Array<number | null>(currentCount).fill(null);
  if (counts.length === 0 || currentCount === 0) return continues;
  const rowTotals = counts.map((row) => row.reduce((a, b) => a + b, 0));
  const columnTotals = Array.from({ length: currentCount }, (_, j) => counts.reduce((sum, row) => sum + row[j], 0));
  const assignment = minimumCostAssignment(costMatrixFromRows(counts.map((row) => row.map((count) => -count))));
  for (const { row: i, column: j } of assignment.pairs) {
    const common = counts[i][j];
    if (common > 0 && (common >= CONTINUATION_SHARE * rowTotals[i] || common >= CONTINUATION_SHARE * columnTotals[j])) continues[j] = i;
  }
  return continues;
}

/** The components of a segment as one comparable string (any order in, ascending out). */
export function componentsKey(components: readonly number[]): string {
  return [...components].sort((a, b) => a - b).join(',');
}

/**
 * Continuations within one run across regroups: a segment made of exactly the components of a
 * segment the run showed before takes that earlier segment back (its key, and its name where the
 * analyst renamed it); the others keep their continuation by shared customers (`byMembers`)
 * unless its key is taken back by an exact match, then they are new. `current[s]` lists segment
 * s's components; `shownBefore` holds one segment per component set.
 */
export function withSegmentsShownBefore<Earlier extends { key: string }>(
  byMembers: readonly (Earlier | null)[],
  current: readonly (readonly number[])[],
  shownBefore: readonly (Earlier & { components: readonly number[] })[],
): (Earlier | null)[] {
  const shownByComponents = new Map(shownBefore.map((segment) => [componentsKey(segment.components), segment]));
  const keysTakenBack = new Set<string>();
  // A key is taken back once, by the first segment that matches it exactly (keys stay unique).
  const takenBack = current.map((components) => {
    const shown = shownByComponents.get(componentsKey(components));
    if (!shown || keysTakenBack.has(shown.key)) return null;
    keysTakenBack.add(shown.key);
    return shown;
  });
  return current.map((_, s) => {
    const exact = takenBack[s];
    if (exact) return exact;
    const continued = byMembers[s];
    return continued && !keysTakenBack.has(continued.key) ? continued : null;
  });
}
