/**
 * IPC channel names between the preload and the main process. The sandboxed preload cannot
 * import this module (it may only require 'electron'), so it repeats the names;
 * test/main/preload.test.ts checks that the two lists agree.
 */
export const channels = {
  call: 'spendmix:call',
  taskEvent: 'spendmix:task-event',
  chooseOpenFile: 'spendmix:choose-open-file',
  chooseSavePath: 'spendmix:choose-save-path',
  menuCommand: 'spendmix:menu-command',
} as const;

/** The scheme the screens are served from (a privileged, standard, secure custom scheme). */
export const appScheme = 'spendmix';
export const appOrigin = `${appScheme}://app`;
