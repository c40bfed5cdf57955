/**
 * Facts of the product design (DESIGN.md), written out here from the document and not from the
 * code, so the tests that compare the code with them can fail when the code drifts.
 */

/** DESIGN.md §9: the screens, in this order, under these names ("our own names; keep them"). */
export const designScreens = ['Sources', 'Model', 'Segments', 'Certainty', 'Review', 'Movement', 'Export'] as const;

/**
 * DESIGN.md §12's window rules ("context isolation, sandbox, no Node integration in the renderer,
 * no remote content, navigation and new windows denied"), as the Electron option that carries
 * each out and the value it must have (Electron's security checklist,
 * electronjs.org/docs/latest/tutorial/security, from memory).
 */
export const designWindowRules: readonly { option: string; required: boolean; rule: string }[] = [
  { option: 'contextIsolation', required: true, rule: 'context isolation' },
  { option: 'sandbox', required: true, rule: 'sandbox' },
  { option: 'nodeIntegration', required: false, rule: 'no Node integration in the renderer' },
  { option: 'nodeIntegrationInWorker', required: false, rule: 'no Node integration in web workers either' },
  { option: 'nodeIntegrationInSubFrames', required: false, rule: 'no Node integration in frames either' },
  { option: 'webSecurity', required: true, rule: 'same-origin policy kept' },
  { option: 'allowRunningInsecureContent', required: false, rule: 'no remote content over plain http' },
  { option: 'webviewTag', required: false, rule: 'no embedded web views' },
  { option: 'experimentalFeatures', required: false, rule: 'no experimental web features' },
  { option: 'navigateOnDragDrop', required: false, rule: 'navigation denied: a dropped file never replaces the page' },
];
