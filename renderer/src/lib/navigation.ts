/** The seven screens, in the order the side rail lists them (DESIGN.md §9 names; keep them). */
export const screens = [
  { id: 'sources', title: 'Sources', hint: 'imports, mappings, data quality' },
  { id: 'model', title: 'Model', hint: 'settings, information criterion, fitting' },
  { id: 'segments', title: 'Segments', hint: 'profiles, scatter, distributions' },
  { id: 'certainty', title: 'Certainty', hint: 'confidence, thresholds, borderline' },
  { id: 'review', title: 'Review', hint: 'the queue of uncertain customers' },
  { id: 'movement', title: 'Movement', hint: 'month-over-month changes' },
  { id: 'export', title: 'Export', hint: 'labelled lists for campaigns' },
] as const;

export type ScreenId = (typeof screens)[number]['id'];

const screenIds = new Set<string>(screens.map((screen) => screen.id));

/** Reads `#/segments?run=4` style locations; unknown screens fall back to Sources. */
export function parseLocation(hash: string): { screen: ScreenId; runId: number | null } {
  const body = hash.replace(/^#\/?/, '');
  const [path, query = ''] = body.split('?');
  const screen = (screenIds.has(path) ? path : 'sources') as ScreenId;
  const run = new URLSearchParams(query).get('run');
  const runId = run !== null && /^[1-9]\d*$/.test(run) ? Number(run) : null;
  return { screen, runId };
}

export function formatLocation(screen: ScreenId, runId: number | null): string {
  return runId === null ? `#/${screen}` : `#/${screen}?run=${runId}`;
}
