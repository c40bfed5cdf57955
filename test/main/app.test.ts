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
const { designWindowRules } = await import('../support/design-reference.js');
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

  it('registers our scheme as privileged before ready, then answers it with the renderer and its security policy', async () => {
    expect(schemeRegistration[0]).toEqual([{ scheme: appScheme, privileges: expect.objectContaining({ standard: true, secure: true }) }]);
    const app = await startElectronApp(paths());
    const [scheme, answer] = fake.module.protocol.handle.mock.calls[0] as unknown as [string, (request: { url: string }) => Promise<Response>];
    expect(scheme).toBe(appScheme);
    const page = await answer({ url: 'spendmix://app/index.html' });
    expect(page.status).toBe(200);
    expect(await page.text()).toContain('<div id="root">');
    expect(page.headers.get('content-security-policy')).toMatch(/default-src 'self'/);
    const escape = await answer({ url: 'spendmix://app/..%2F..%2Fuser-data%2Frecent-databases.json' });
    expect(await escape.text()).not.toContain('[');
    expect(fake.BrowserWindow.instances[0].loadURL).toHaveBeenCalledWith('spendmix://app/index.html');
    await app.session.close();
  });

  it('opens its window under every window rule of the design, and its pages can neither navigate away, open windows, embed views nor get permissions', async () => {
    const where = paths();
    const app = await startElectronApp(where);
    expect(fake.BrowserWindow.instances).toHaveLength(1);
    const { webPreferences } = fake.BrowserWindow.instances[0].options as { webPreferences: Record<string, unknown> };
    expect(webPreferences.preload).toBe(where.preloadPath);
    for (const { option, required, rule } of designWindowRules) expect(webPreferences[option], rule).toBe(required);

    // Every page's contents, as Electron announces them, get the per-window rules.
    const contents = new fake.FakeWebContents();
    fake.appListeners.get('web-contents-created')!({}, contents);
    const navigation = (url: string) => {
      const event = { preventDefault: vi.fn() };
      contents.listeners.get('will-navigate')!(event, url);
      return event.preventDefault.mock.calls.length > 0 ? 'denied' : 'allowed';
    };
    expect([navigation('https://example.invalid/'), navigation('file:///etc/passwd'), navigation('spendmix://app/index.html#/segments')]).toEqual(['denied', 'denied', 'allowed']);
    expect(contents.windowOpenHandler!({ url: 'spendmix://app/index.html' })).toEqual({ action: 'deny' });
    const webview = { preventDefault: vi.fn() };
    contents.listeners.get('will-attach-webview')!(webview);
    expect(webview.preventDefault).toHaveBeenCalled();

    // The session the windows share: no permission is granted, nothing goes out over the network.
    const session = fake.module.session.defaultSession;
    const askPermission = session.setPermissionRequestHandler.mock.calls.at(-1)![0] as (wc: unknown, permission: string, callback: (granted: boolean) => void) => void;
    const granted: boolean[] = [];
    for (const permission of ['media', 'geolocation', 'notifications']) askPermission(contents, permission, (answer) => granted.push(answer));
    expect(granted).toEqual([false, false, false]);
    const [, beforeRequest] = session.webRequest.onBeforeRequest.mock.calls.at(-1) as unknown as [unknown, (details: unknown, callback: (answer: unknown) => void) => void];
    const answers: unknown[] = [];
    beforeRequest({ url: 'https://example.invalid/pixel.gif' }, (answer) => answers.push(answer));
    expect(answers).toEqual([{ cancel: true }]);
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

  it('acts on the application menu: opens a chosen database, hands a chosen file to the import screen, asks for an export', async () => {
    const app = await startElectronApp(paths());
    const window = fake.BrowserWindow.instances[0];
    const menuItems = () => {
      const template = (fake.module.Menu.buildFromTemplate.mock.calls.at(-1) as unknown as [{ submenu?: { label?: string; click?: () => void }[] }[]])[0];
      return new Map(template[0].submenu!.filter((item) => item.label).map((item) => [item.label!, item]));
    };
    expect([...menuItems().keys()]).toEqual(expect.arrayContaining(['Open Database…', 'New Database…', 'Open Recent', 'Import File…', 'Export…', 'Quit Spendmix']));
    const sent = () => window.webContents.send.mock.calls.filter(([channel]) => channel === channels.menuCommand).map(([, command]) => command);

    const other = join(fake.state.userData, 'april.db');
    fake.module.dialog.showOpenDialog.mockResolvedValueOnce({ canceled: false, filePaths: [other] });
    menuItems().get('Open Database…')!.click!();
    await vi.waitFor(() => expect(app.session.dbPath).toBe(other));
    expect(existsSync(other)).toBe(true);
    expect(sent()).toContainEqual({ command: 'database-opened', path: other });
    expect(window.setTitle).toHaveBeenLastCalledWith(`Spendmix — ${other}`);
    // The database just opened leads the recent list of the rebuilt menu.
    expect(JSON.parse(readFileSync(join(fake.state.userData, 'recent-databases.json'), 'utf8'))[0]).toBe(other);

    fake.module.dialog.showOpenDialog.mockResolvedValueOnce({ canceled: false, filePaths: ['/home/analyst/march.csv'] });
    menuItems().get('Import File…')!.click!();
    await vi.waitFor(() => expect(sent()).toContainEqual({ command: 'import-file', path: '/home/analyst/march.csv' }));
    menuItems().get('Export…')!.click!();
    expect(sent()).toContainEqual({ command: 'export' });

    // A cancelled dialog changes nothing.
    menuItems().get('Open Database…')!.click!();
    await new Promise((resolve) => setTimeout(resolve, 20));
    expect(app.session.dbPath).toBe(other);
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
