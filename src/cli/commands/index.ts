import type { RegisterCommand } from '../run-command.js';
import { registerDemo } from './demo.js';
import { registerImport } from './import.js';
import { registerServe } from './serve.js';

/** Every CLI command, in the order `--help` lists them. Add a command by adding its module here. */
export const commandModules: RegisterCommand[] = [registerDemo, registerImport, registerServe];
