import { app, dialog } from 'electron';
import { startElectronApp } from './app.js';

// Entry of the desktop app (package.json "main": dist/main/electron/main.js).
startElectronApp().catch((error: unknown) => {
  dialog.showErrorBox('Spendmix could not start', error instanceof Error ? (error.stack ?? error.message) : String(error));
  app.exit(1);
});
