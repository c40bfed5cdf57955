import type { BrowserWindow, IpcMain, IpcMainInvokeEvent, OpenDialogOptions, SaveDialogOptions } from 'electron';
import { z } from 'zod';
import { toApiError } from '../../src/api/api-errors.js';
import type { CallOutcome, MenuCommand, TaskEvent } from '../../src/api/contract.js';
import { callApiOutcome } from '../../src/api/handlers.js';
import type { ApiSession } from '../../src/api/session.js';
import { channels } from './channels.js';
import { isTrustedSender } from './security.js';

/** The dialogs the IPC layer needs, injectable for tests (Electron's `dialog` in the app). */
export interface DialogPort {
  showOpenDialog(window: BrowserWindow, options: OpenDialogOptions): Promise<{ canceled: boolean; filePaths: string[] }>;
  showSaveDialog(window: BrowserWindow, options: SaveDialogOptions): Promise<{ canceled: boolean; filePath?: string }>;
}

const extension = z.string().regex(/^[A-Za-z0-9]{1,10}$/, 'must be a file extension without the dot');
const openFileOptions = z.strictObject({ title: z.string().max(200), extensions: z.array(extension).max(20) });
const saveFileOptions = z.strictObject({
  title: z.string().max(200),
  defaultName: z.string().max(255),
  extensions: z.array(extension).max(20),
});

const refused: CallOutcome = { ok: false, error: { kind: 'input', message: 'Refused: the call did not come from a Spendmix window.' } };

export interface IpcWiring {
  /** Sends a menu command to every window (the menu's Import/Export and first-start offers). */
  sendMenuCommand(command: MenuCommand): void;
  dispose(): void;
}

/**
 * Wires the API into Electron IPC: one invoke channel for every API method (validated by the
 * contract's zod schemas in `callApiOutcome`), the two dialogs, and task events fanned out to
 * every window. Each call's sender is checked first (top frame of one of our windows, on our
 * own scheme); errors come back as `CallOutcome` so their kind and field issues survive IPC.
 */
export function registerIpc(options: {
  ipcMain: IpcMain;
  session: ApiSession;
  windows: () => readonly BrowserWindow[];
  dialog: DialogPort;
}): IpcWiring {
  const { ipcMain, session, windows, dialog } = options;
  const trusted = (event: IpcMainInvokeEvent) => isTrustedSender(event, windows());
  const windowOf = (event: IpcMainInvokeEvent) => windows().find((window) => window.webContents === event.sender)!;

  ipcMain.handle(channels.call, async (event, method: unknown, input: unknown): Promise<CallOutcome> => {
    if (!trusted(event)) return refused;
    if (typeof method !== 'string') return { ok: false, error: { kind: 'input', message: 'The method name must be a string.' } };
    return callApiOutcome(session, method, input);
  });

  ipcMain.handle(channels.chooseOpenFile, async (event, raw: unknown): Promise<CallOutcome<string | null>> => {
    if (!trusted(event)) return refused as CallOutcome<string | null>;
    try {
      const { title, extensions } = openFileOptions.parse(raw);
      const answer = await dialog.showOpenDialog(windowOf(event), {
        title,
        properties: ['openFile'],
        filters: extensions.length > 0 ? [{ name: extensions.join(', ').toUpperCase(), extensions }] : [],
      });
      return { ok: true, value: answer.canceled ? null : (answer.filePaths[0] ?? null) };
    } catch (error) {
      return { ok: false, error: toApiError(error) };
    }
  });

  ipcMain.handle(channels.chooseSavePath, async (event, raw: unknown): Promise<CallOutcome<string | null>> => {
    if (!trusted(event)) return refused as CallOutcome<string | null>;
    try {
      const { title, defaultName, extensions } = saveFileOptions.parse(raw);
      const answer = await dialog.showSaveDialog(windowOf(event), {
        title,
        defaultPath: defaultName,
        filters: extensions.length > 0 ? [{ name: extensions.join(', ').toUpperCase(), extensions }] : [],
      });
      return { ok: true, value: answer.canceled || !answer.filePath ? null : answer.filePath };
    } catch (error) {
      return { ok: false, error: toApiError(error) };
    }
  });

  const broadcast = (channel: string, payload: unknown) => {
    for (const window of windows()) {
      if (!window.isDestroyed()) window.webContents.send(channel, payload);
    }
  };
  const unsubscribe = session.tasks.onEvent((event: TaskEvent) => broadcast(channels.taskEvent, event));

  return {
    sendMenuCommand: (command) => broadcast(channels.menuCommand, command),
    dispose: () => {
      unsubscribe();
      for (const channel of [channels.call, channels.chooseOpenFile, channels.chooseSavePath]) ipcMain.removeHandler(channel);
    },
  };
}
