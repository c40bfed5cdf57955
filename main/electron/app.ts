import * as electron from 'electron';
import type { BrowserWindow as BrowserWindowType } from 'electron';
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import type { TaskStarted } from '../../src/api/contract.js';
import { callApi } from '../../src/api/handlers.js';
import { ApiSession, type SessionOptions } from '../../src/api/session.js';
import { appOrigin, appScheme } from './channels.js';
import { registerIpc, type IpcWiring } from './ipc.js';
import { buildMenuTemplate } from './menu.js';
import { serveAppRequest } from './protocol.js';
import { RecentDatabases } from './recent.js';
import { insecurePreferences, lockDownContents, lockDownSession, secureWebPreferences } from './security.js';

const { app, BrowserWindow, Menu, dialog, ipcMain, protocol, session: electronSession } = electron;

export interface AppPaths {
  /** Built renderer (index.html and assets). */
  rendererDir: string;
  /** Compiled preload script (CommonJS, sandboxed). */
  preloadPath: string;
}

/** Where the compiled app finds its pieces: dist/renderer and dist/main/electron/preload.cjs. */
export function defaultAppPaths(): AppPaths {
  const here = fileURLToPath(new URL('.', import.meta.url));
  return { rendererDir: join(here, '..', '..', 'renderer'), preloadPath: join(here, 'preload.cjs') };
}

/** The database used on first start and whenever no recent one exists any more. */
export function defaultDatabasePath(): string {
  return join(app.getPath('userData'), 'spendmix.db');
}

// Must run before the app is ready: our scheme behaves like https (standard, secure origin).
protocol.registerSchemesAsPrivileged([
  { scheme: appScheme, privileges: { standard: true, secure: true, supportFetchAPI: true, codeCache: true } },
]);

/**
 * Starts the desktop app: one locked-down window showing the screens from our own scheme, the
 * application menu, the API over IPC, and on first start a database in the user's data folder
 * with the offer to load the demo chain.
 */
export async function startElectronApp(
  paths: AppPaths = defaultAppPaths(),
  sessionOptions: Pick<SessionOptions, 'runLongTask'> = {},
): Promise<{ session: ApiSession; window: BrowserWindowType; ipc: IpcWiring }> {
  await app.whenReady();
  const recent = new RecentDatabases(join(app.getPath('userData'), 'recent-databases.json'));
  const windows: BrowserWindowType[] = [];
  // Assigned once the IPC is wired below; menu actions only run after that.
  let ipc: IpcWiring | undefined;

  const refreshMenu = () => {
    Menu.setApplicationMenu(
      Menu.buildFromTemplate(
        buildMenuTemplate(
          { openDatabase: () => void chooseDatabase(false), newDatabase: () => void chooseDatabase(true), openRecent: (path) => openDatabase(path), importFile: () => void chooseImport(), exportRun: () => ipc?.sendMenuCommand({ command: 'export' }) },
          recent.list(),
          process.platform,
        ),
      ),
    );
  };

  const firstPath = recent.list().find((path) => existsSync(path)) ?? defaultDatabasePath();
  const isFirstStart = !existsSync(firstPath);
  const apiSession = new ApiSession({
    ...sessionOptions,
    dbPath: firstPath,
    shell: 'electron',
    recentDatabases: () => recent.list(),
    onDatabaseOpened: (path) => {
      recent.remember(path);
      refreshMenu();
      for (const window of windows) window.setTitle(`Spendmix — ${path}`);
    },
  });

  const openDatabase = (path: string) => {
    try {
      apiSession.open(path);
      ipc?.sendMenuCommand({ command: 'database-opened', path });
    } catch (error) {
      dialog.showErrorBox('Cannot open the database', error instanceof Error ? error.message : String(error));
    }
  };

  const chooseDatabase = async (create: boolean) => {
    const window = windows[0];
    if (!window) return;
    const filters = [{ name: 'Spendmix database', extensions: ['db', 'sqlite'] }];
    if (create) {
      const answer = await dialog.showSaveDialog(window, { title: 'New Spendmix database', defaultPath: 'spendmix.db', filters });
      if (!answer.canceled && answer.filePath) openDatabase(answer.filePath);
    } else {
      const answer = await dialog.showOpenDialog(window, { title: 'Open a Spendmix database', properties: ['openFile'], filters });
      if (!answer.canceled && answer.filePaths[0]) openDatabase(answer.filePaths[0]);
    }
  };

  const chooseImport = async () => {
    const window = windows[0];
    if (!window) return;
    const answer = await dialog.showOpenDialog(window, {
      title: 'Import a file',
      properties: ['openFile'],
      filters: [{ name: 'CSV or Excel', extensions: ['csv', 'txt', 'tsv', 'xlsx'] }],
    });
    if (!answer.canceled && answer.filePaths[0]) ipc?.sendMenuCommand({ command: 'import-file', path: answer.filePaths[0] });
  };

  protocol.handle(appScheme, (request) => serveAppRequest(paths.rendererDir, request.url));
  lockDownSession(electronSession.defaultSession);
  app.on('web-contents-created', (_event, contents) => lockDownContents(contents));

  ipc = registerIpc({ ipcMain, session: apiSession, windows: () => windows, dialog });
  refreshMenu();

  const webPreferences = secureWebPreferences(paths.preloadPath);
  const insecure = insecurePreferences(webPreferences);
  if (insecure.length > 0) throw new Error(`Refusing to open a window with unsafe settings: ${insecure.join('; ')}.`);
  const window = new BrowserWindow({
    width: 1360,
    height: 880,
    minWidth: 960,
    minHeight: 640,
    title: `Spendmix — ${apiSession.dbPath}`,
    show: false,
    backgroundColor: '#f6f5f1',
    webPreferences,
  });
  windows.push(window);
  window.once('ready-to-show', () => window.show());
  window.on('closed', () => windows.splice(windows.indexOf(window), 1));
  await window.loadURL(`${appOrigin}/index.html`);

  if (isFirstStart) await offerDemo(window, apiSession, ipc);


  const wiring = ipc;
  app.on('window-all-closed', () => {
    wiring.dispose();
    void apiSession.close().finally(() => app.quit());
  });
  return { session: apiSession, window, ipc: wiring };
}

/** First start: a new, empty database; offer to fill it with the invented demo chain. */
async function offerDemo(window: BrowserWindowType, apiSession: ApiSession, ipc: IpcWiring): Promise<void> {
  const answer = await dialog.showMessageBox(window, {
    type: 'question',
    title: 'Welcome to Spendmix',
    message: 'Load the demo chain?',
    detail:
      `Your database is ${apiSession.dbPath}. It is empty. Spendmix can fill it with the invented ` +
      'Larkmoor Fresh Markets chain (16 stores, about two years of receipts) so you can try every screen.',
    buttons: ['Load the demo chain', 'Start empty'],
    defaultId: 0,
    cancelId: 1,
  });
  if (answer.response !== 0) return;
  const started = (await callApi(apiSession, 'loadDemo', {})) as TaskStarted<'loadDemo'>;
  ipc.sendMenuCommand({ command: 'demo-started', taskId: started.taskId });
}
