import { vi } from 'vitest';

/**
 * A stand-in for the 'electron' module (its binary cannot be downloaded here): just enough of
 * app, BrowserWindow, Menu, dialog, ipcMain, protocol, session, contextBridge, ipcRenderer and
 * webUtils to record how the shell uses them. Tests install it with
 * `vi.mock('electron', () => fakeElectron)`.
 */
export function createFakeElectron() {
  const state = { userData: '' };
  const ipcHandlers = new Map<string, (...args: unknown[]) => unknown>();
  const appListeners = new Map<string, (...args: unknown[]) => unknown>();

  class FakeWebContents {
    readonly listeners = new Map<string, (...args: unknown[]) => unknown>();
    readonly send = vi.fn();
    windowOpenHandler: ((details: unknown) => unknown) | null = null;
    on(event: string, listener: (...args: unknown[]) => unknown) {
      this.listeners.set(event, listener);
      return this;
    }
    setWindowOpenHandler(handler: (details: unknown) => unknown) {
      this.windowOpenHandler = handler;
    }
  }

  class BrowserWindow {
    static instances: BrowserWindow[] = [];
    readonly webContents = new FakeWebContents();
    readonly loadURL = vi.fn(async () => undefined);
    readonly show = vi.fn();
    readonly setTitle = vi.fn();
    readonly once = vi.fn();
    readonly on = vi.fn();
    constructor(readonly options: Record<string, unknown>) {
      BrowserWindow.instances.push(this);
    }
    isDestroyed() {
      return false;
    }
  }

  const defaultSession = {
    setPermissionRequestHandler: vi.fn(),
    setPermissionCheckHandler: vi.fn(),
    setDevicePermissionHandler: vi.fn(),
    webRequest: { onBeforeRequest: vi.fn() },
  };

  const module = {
    app: {
      whenReady: vi.fn(async () => undefined),
      getPath: vi.fn((name: string) => {
        if (name !== 'userData') throw new Error(`unexpected app.getPath(${name})`);
        return state.userData;
      }),
      on: vi.fn((event: string, listener: (...args: unknown[]) => unknown) => appListeners.set(event, listener)),
      quit: vi.fn(),
      exit: vi.fn(),
    },
    BrowserWindow,
    Menu: {
      setApplicationMenu: vi.fn(),
      buildFromTemplate: vi.fn((template: unknown) => ({ template })),
    },
    dialog: {
      showOpenDialog: vi.fn(async () => ({ canceled: true, filePaths: [] as string[] })),
      showSaveDialog: vi.fn(async () => ({ canceled: true, filePath: undefined as string | undefined })),
      showMessageBox: vi.fn(async () => ({ response: 1 })),
      showErrorBox: vi.fn(),
    },
    ipcMain: {
      handle: vi.fn((channel: string, handler: (...args: unknown[]) => unknown) => ipcHandlers.set(channel, handler)),
      removeHandler: vi.fn((channel: string) => ipcHandlers.delete(channel)),
    },
    protocol: { registerSchemesAsPrivileged: vi.fn(), handle: vi.fn() },
    session: { defaultSession },
    contextBridge: { exposeInMainWorld: vi.fn() },
    ipcRenderer: { invoke: vi.fn(async () => ({ ok: true, value: null })), on: vi.fn(), removeListener: vi.fn(), send: vi.fn() },
    webUtils: { getPathForFile: vi.fn(() => '/home/analyst/receipts.csv') },
  };
  return { module, state, ipcHandlers, appListeners, BrowserWindow, FakeWebContents };
}

export type FakeElectron = ReturnType<typeof createFakeElectron>;
