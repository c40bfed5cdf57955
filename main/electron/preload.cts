// The only bridge between the screens and the main process (DESIGN.md §12). It runs sandboxed,
// with context isolation, so it may require nothing but 'electron' and must stay one file. It
// exposes the task-shaped API and the shell's dialogs as `window.spendmix` — never ipcRenderer
// itself — and the main process validates every call and checks the frame it came from.
import { contextBridge, ipcRenderer, webUtils, type IpcRendererEvent } from 'electron';

// Keep in step with main/electron/channels.ts (test/main/preload.test.ts compares them).
const channels = {
  call: 'spendmix:call',
  taskEvent: 'spendmix:task-event',
  chooseOpenFile: 'spendmix:choose-open-file',
  chooseSavePath: 'spendmix:choose-save-path',
  menuCommand: 'spendmix:menu-command',
} as const;

/** Subscribes to one main→renderer channel; the listener sees the payload only, never the event. */
function subscribe(channel: string, listener: (payload: unknown) => void): () => void {
  const wrapped = (_event: IpcRendererEvent, payload: unknown) => listener(payload);
  ipcRenderer.on(channel, wrapped);
  return () => {
    ipcRenderer.removeListener(channel, wrapped);
  };
}

const bridge = {
  call: (method: string, input: unknown) => ipcRenderer.invoke(channels.call, String(method), input),
  onTaskEvent: (listener: (event: unknown) => void) => subscribe(channels.taskEvent, listener),
  chooseOpenFile: (options: unknown) => ipcRenderer.invoke(channels.chooseOpenFile, options),
  chooseSavePath: (options: unknown) => ipcRenderer.invoke(channels.chooseSavePath, options),
  pathForFile: (file: File) => webUtils.getPathForFile(file),
  onMenuCommand: (listener: (command: unknown) => void) => subscribe(channels.menuCommand, listener),
};

contextBridge.exposeInMainWorld('spendmix', bridge);
