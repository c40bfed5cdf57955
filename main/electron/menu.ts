import type { MenuItemConstructorOptions } from 'electron';
import { basename } from 'node:path';

/** What the menu's items do; main.ts supplies the real actions, tests record the calls. */
export interface MenuActions {
  openDatabase(): void;
  newDatabase(): void;
  openRecent(path: string): void;
  importFile(): void;
  exportRun(): void;
}

/**
 * The application menu: File (open, new, recent databases, import, export, quit) plus the
 * standard Edit and Window roles so copy/paste and window keys work as users expect.
 */
export function buildMenuTemplate(actions: MenuActions, recent: readonly string[], platform: NodeJS.Platform): MenuItemConstructorOptions[] {
  const recentItems: MenuItemConstructorOptions[] =
    recent.length === 0
      ? [{ label: 'No recent databases', enabled: false }]
      : recent.map((path) => ({ label: `${basename(path)} — ${path}`, click: () => actions.openRecent(path) }));
  const file: MenuItemConstructorOptions = {
    label: '&File',
    submenu: [
      { label: 'Open Database…', accelerator: 'CmdOrCtrl+O', click: () => actions.openDatabase() },
      { label: 'New Database…', accelerator: 'CmdOrCtrl+N', click: () => actions.newDatabase() },
      { label: 'Open Recent', submenu: recentItems },
      { type: 'separator' },
      { label: 'Import File…', accelerator: 'CmdOrCtrl+I', click: () => actions.importFile() },
      { label: 'Export…', accelerator: 'CmdOrCtrl+E', click: () => actions.exportRun() },
      { type: 'separator' },
      { role: 'quit', label: 'Quit Spendmix' },
    ],
  };
  const template: MenuItemConstructorOptions[] = [file, { role: 'editMenu' }, { role: 'windowMenu' }];
  if (platform === 'darwin') template.unshift({ role: 'appMenu' });
  return template;
}
