import { spawn, spawnSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { findElectronBinary } from './electron-binary.js';

/**
 * `npm start`: builds the app (renderer with Vite, main and the core with tsc into dist/) and
 * launches Electron on it. Where the Electron binary is missing it says so, names the browser
 * host instead, and exits with code 1.
 */
const root = fileURLToPath(new URL('..', import.meta.url));

const build = spawnSync('npm', ['run', '-s', 'build'], { cwd: root, stdio: 'inherit' });
if (build.status !== 0) {
  process.stderr.write('spendmix: the build failed; see the messages above.\n');
  process.exit(build.status ?? 1);
}

const electron = findElectronBinary();
if ('missing' in electron) {
  process.stderr.write(
    `spendmix: cannot start the desktop app: the Electron binary is not installed (${electron.missing}).\n` +
      'Use the browser host instead: `npm run serve -- --db spendmix.db`, then open the address it prints.\n',
  );
  process.exit(1);
}

const child = spawn(electron.path, ['.'], { cwd: root, stdio: 'inherit' });
child.on('exit', (code, signal) => process.exit(code ?? (signal ? 1 : 0)));
