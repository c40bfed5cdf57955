import { existsSync, mkdirSync, mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import ts from 'typescript';
import { beforeEach, describe, expect, it, vi } from 'vitest';
import type { CallOutcome, TaskEvent } from '../../src/api/contract.js';

const fake = await vi.hoisted(async () => (await import('./fake-electron.js')).createFakeElectron());
vi.mock('electron', () => fake.module);

const { startElectronApp } = await import('../../main/electron/app.js');
const { channels, appScheme } = await import('../../main/electron/channels.js');
// Recorded at module load, before any test clears the mocks: it must precede app ready.
const schemeRegistration = fake.module.protocol.registerSchemesAsPrivileged.mock.calls[0] as unknown as [
  { scheme: string; privileges: Record<string, boolean> }[],
];

function paths() {
  const folder = mkdtempSync(join(tmpdir(), 'spendmix-electron-'));
  const rendererDir = join(folder, 'renderer');
  mkdirSync(rendererDir);
  writeFileSync(join(rendererDir, 'index.html'), '<!doctype html><div id="root"></div>');
  fake.state.userData = join(folder, 'user-data');
  mkdirSync(fake.state.userData);
  return { rendererDir, preloadPath: join(folder, 'preload.cjs') };
}

const trustedEvent = (window: InstanceType<typeof fake.BrowserWindow>) => ({
  sender: window.webContents,
  senderFrame: { url: 'spendmix://app/index.html', parent: null },
});

describe('the Electron shell with electron mocked', () => {
  beforeEach(() => {
    fake.BrowserWindow.instances.length = 0;
    fake.ipcHandlers.clear();
    vi.clearAllMocks();
  });

  it('registers our scheme as privileged before ready, then serves the renderer from it', async () => {
    expect(schemeRegistration[0]).toEqual([{ scheme: appScheme, privileges: expect.objectContaining({ standard: true, secure: true }) }]);
    const app = await startElectronApp(paths());
    expect(fake.module.protocol.handle).toHaveBeenCalledWith(appScheme, expect.any(Function));
    const window = fake.BrowserWindow.instances[0];
    expect(window.loadURL).toHaveBeenCalledWith('spendmix://app/index.html');
    await app.session.close();
  });

  it('opens one window with the secure preferences and our preload', async () => {
    const where = paths();
    const app = await startElectronApp(where);
    expect(fake.BrowserWindow.instances).toHaveLength(1);
    const { webPreferences } = fake.BrowserWindow.instances[0].options as { webPreferences: Record<string, unknown> };
    expect(webPreferences).toMatchObject({ preload: where.preloadPath, contextIsolation: true, sandbox: true, nodeIntegration: false, webSecurity: true });
    expect(fake.module.session.defaultSession.setPermissionRequestHandler).toHaveBeenCalled();
    expect(fake.module.session.defaultSession.webRequest.onBeforeRequest).toHaveBeenCalled();
    expect(fake.module.app.on).toHaveBeenCalledWith('web-contents-created', expect.any(Function));
    await app.session.close();
  });

  it('on first start creates the database in the user data folder and offers the demo chain', async () => {
    const app = await startElectronApp(paths());
    expect(app.session.dbPath).toBe(join(fake.state.userData, 'spendmix.db'));
    expect(existsSync(join(fake.state.userData, 'spendmix.db'))).toBe(true);
    expect(fake.module.dialog.showMessageBox).toHaveBeenCalledOnce();
    const [, options] = fake.module.dialog.showMessageBox.mock.calls[0] as unknown as [unknown, { message: string; buttons: string[] }];
    expect(options.message).toMatch(/demo chain/);
    expect(options.buttons[0]).toMatch(/Load the demo chain/);
    // Recent list now holds it, so the next start opens the same database without asking.
    expect(JSON.parse(readFileSync(join(fake.state.userData, 'recent-databases.json'), 'utf8'))).toEqual([app.session.dbPath]);
    await app.session.close();
  });

  it('loads the demo as a task when the user accepts, and tells the window its task id', async () => {
    fake.module.dialog.showMessageBox.mockResolvedValueOnce({ response: 0 });
    const runLongTask = vi.fn(async () => ({ db: 'x', customers: 6000, receipts: 1, visits: 1 }));
    const app = await startElectronApp(paths(), { runLongTask: runLongTask as never });
    await vi.waitFor(() => expect(runLongTask).toHaveBeenCalledOnce());
    expect((runLongTask.mock.calls[0] as unknown as [{ method: string; dbPath: string }])[0]).toMatchObject({ method: 'loadDemo', dbPath: app.session.dbPath });
    const window = fake.BrowserWindow.instances[0];
    const menuCommand = window.webContents.send.mock.calls.find(([channel]) => channel === channels.menuCommand);
    expect(menuCommand?.[1]).toMatchObject({ command: 'demo-started', taskId: expect.any(String) });
    await app.session.close();
  });

  it('wires the API to IPC: trusted calls reach the handlers, others are refused; task events reach the window', async () => {
    const app = await startElectronApp(paths(), { runLongTask: (async () => ({ db: 'x', customers: 1, receipts: 2, visits: 3 })) as never });
    const window = fake.BrowserWindow.instances[0];
    const call = fake.ipcHandlers.get(channels.call)!;
    const info = (await call(trustedEvent(window), 'databaseInfo', {})) as CallOutcome<{ path: string }>;
    expect(info).toMatchObject({ ok: true, value: { path: app.session.dbPath } });

    const foreign = (await call({ sender: window.webContents, senderFrame: { url: 'https://example.invalid/', parent: null } }, 'databaseInfo', {})) as CallOutcome;
    expect(foreign.ok).toBe(false);
    const subframe = (await call({ sender: window.webContents, senderFrame: { url: 'spendmix://app/index.html', parent: {} } }, 'databaseInfo', {})) as CallOutcome;
    expect(subframe.ok).toBe(false);

    window.webContents.send.mockClear();
    const started = (await call(trustedEvent(window), 'loadDemo', { customers: 100 })) as CallOutcome<{ taskId: string }>;
    expect(started.ok).toBe(true);
    await vi.waitFor(() => {
      const events = window.webContents.send.mock.calls.filter(([channel]) => channel === channels.taskEvent).map(([, event]) => event as TaskEvent);
      expect(events.at(-1)).toMatchObject({ type: 'done', method: 'loadDemo', result: { customers: 1 } });
    });
    await app.session.close();
  });

  it('validates dialog options and answers with the chosen path or null', async () => {
    const app = await startElectronApp(paths());
    const window = fake.BrowserWindow.instances[0];
    const open = fake.ipcHandlers.get(channels.chooseOpenFile)!;
    const save = fake.ipcHandlers.get(channels.chooseSavePath)!;
    fake.module.dialog.showOpenDialog.mockResolvedValueOnce({ canceled: false, filePaths: ['/home/analyst/march.csv'] });
    expect(await open(trustedEvent(window), { title: 'Choose', extensions: ['csv', 'xlsx'] })).toEqual({ ok: true, value: '/home/analyst/march.csv' });
    expect(await open(trustedEvent(window), { title: 'Choose', extensions: ['csv'] })).toEqual({ ok: true, value: null });
    const bad = (await open(trustedEvent(window), { title: 'Choose', extensions: ['../x'] })) as CallOutcome;
    expect(bad.ok === false && bad.error.kind).toBe('input');
    fake.module.dialog.showSaveDialog.mockResolvedValueOnce({ canceled: false, filePath: '/home/analyst/list.xlsx' });
    expect(await save(trustedEvent(window), { title: 'Save', defaultName: 'list.xlsx', extensions: ['xlsx'] })).toEqual({ ok: true, value: '/home/analyst/list.xlsx' });
    const untrusted = (await save({ sender: {}, senderFrame: { url: 'spendmix://app/', parent: null } }, { title: 'Save', defaultName: 'x', extensions: [] })) as CallOutcome;
    expect(untrusted.ok).toBe(false);
    await app.session.close();
  });

  it('builds the application menu with the file actions', async () => {
    const app = await startElectronApp(paths());
    const template = (fake.module.Menu.buildFromTemplate.mock.calls.at(-1) as unknown as [{ label?: string; submenu?: { label?: string }[] }[]])[0];
    const labels = template[0].submenu!.map((item) => item.label);
    expect(labels).toEqual(expect.arrayContaining(['Open Database…', 'Open Recent', 'Import File…', 'Export…', 'Quit Spendmix']));
    expect(fake.module.Menu.setApplicationMenu).toHaveBeenCalled();
    await app.session.close();
  });
});

describe('the preload bridge', () => {
  it('exposes exactly the task-shaped API as window.spendmix, never ipcRenderer', async () => {
    fake.module.contextBridge.exposeInMainWorld.mockClear();
    // Run the real preload as Electron's sandbox would: compiled to CommonJS, with a require
    // that has nothing but 'electron' to give.
    const source = readFileSync(new URL('../../main/electron/preload.cts', import.meta.url), 'utf8');
    const compiled = ts.transpileModule(source, { compilerOptions: { module: ts.ModuleKind.CommonJS, target: ts.ScriptTarget.ES2022 } }).outputText;
    const required: string[] = [];
    const sandboxRequire = (name: string) => {
      required.push(name);
      if (name !== 'electron') throw new Error(`a sandboxed preload cannot require ${name}`);
      return fake.module;
    };
    const module = { exports: {} };
    new Function('require', 'module', 'exports', compiled)(sandboxRequire, module, module.exports);
    expect(required).toEqual(['electron']);
    expect(fake.module.contextBridge.exposeInMainWorld).toHaveBeenCalledOnce();
    const [name, bridge] = fake.module.contextBridge.exposeInMainWorld.mock.calls[0] as unknown as [string, Record<string, unknown>];
    expect(name).toBe('spendmix');
    expect(Object.keys(bridge).sort()).toEqual(['call', 'chooseOpenFile', 'chooseSavePath', 'onMenuCommand', 'onTaskEvent', 'pathForFile']);
    for (const value of Object.values(bridge)) {
      expect(typeof value).toBe('function');
      expect(value).not.toBe(fake.module.ipcRenderer);
      expect(value).not.toBe(fake.module.ipcRenderer.invoke);
    }
    const api = bridge as { call: (m: string, i: unknown) => Promise<unknown>; onTaskEvent: (l: (e: unknown) => void) => () => void; pathForFile: (f: unknown) => string };
    await api.call('databaseInfo', {});
    expect(fake.module.ipcRenderer.invoke).toHaveBeenCalledWith(channels.call, 'databaseInfo', {});
    const listener = vi.fn();
    const unsubscribe = api.onTaskEvent(listener);
    const [channel, wrapped] = fake.module.ipcRenderer.on.mock.calls[0] as unknown as [string, (event: unknown, payload: unknown) => void];
    expect(channel).toBe(channels.taskEvent);
    wrapped({ sender: 'the IPC event must not reach the page' }, { type: 'progress' });
    expect(listener).toHaveBeenCalledWith({ type: 'progress' });
    unsubscribe();
    expect(fake.module.ipcRenderer.removeListener).toHaveBeenCalledWith(channels.taskEvent, wrapped);
    expect(api.pathForFile({ name: 'receipts.csv' })).toBe('/home/analyst/receipts.csv');
  });

  it('uses the same channel names as the main process', () => {
    const source = readFileSync(new URL('../../main/electron/preload.cts', import.meta.url), 'utf8');
    for (const [key, name] of Object.entries(channels)) expect(source).toContain(`${key}: '${name}'`);
    // Sandboxed preloads may require nothing but electron.
    expect([...source.matchAll(/from '([^']+)'/g)].map((match) => match[1])).toEqual(['electron']);
  });
});
