import { mkdirSync, mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { checkLayering, checkModelEntry } from './support/layering.js';

const projectRoot = fileURLToPath(new URL('..', import.meta.url));

function plantTree(files: Record<string, string>): string {
  const root = mkdtempSync(join(tmpdir(), 'spendmix-layering-'));
  for (const [path, text] of Object.entries(files)) {
    mkdirSync(dirname(join(root, path)), { recursive: true });
    writeFileSync(join(root, path), text);
  }
  return root;
}

describe('layering rules (DESIGN.md §2)', () => {
  it('the project itself has no violations', () => {
    expect(checkLayering(projectRoot)).toEqual([]);
  });

  it('catches src importing electron, react and main', () => {
    const root = plantTree({
      'src/model/a.ts': "import { app } from 'electron';\nimport React from 'react';\nimport x from '../../main/window.js';\n",
      'main/window.ts': 'export default 1;\n',
    });
    const rules = checkLayering(root).map((v) => v.rule);
    expect(rules).toEqual(['src must not import electron', 'src must not import react', 'src must not import main']);
  });

  it('catches renderer importing Node built-ins, better-sqlite3, main, or values from src', () => {
    const root = plantTree({
      'renderer/app.tsx': [
        "import fs from 'node:fs';",
        "import path from 'path';",
        "import Database from 'better-sqlite3';",
        "import { x } from '../main/host.js';",
        "import { fit } from '../src/model/em.js';",
        "import { schemas } from '../src/api/contract.js';",
        "import type { Api } from '../src/api/contract.js';",
      ].join('\n'),
    });
    const found = checkLayering(root).map((v) => `${v.specifier}: ${v.rule}`);
    expect(found).toEqual([
      'node:fs: renderer must not import Node built-ins',
      'path: renderer must not import Node built-ins',
      'better-sqlite3: renderer must not import better-sqlite3',
      '../main/host.js: renderer must not import main',
      '../src/model/em.js: renderer may only import types from src/api',
      '../src/api/contract.js: renderer may only import types from src/api',
    ]);
  });

  it('catches main importing renderer, and dynamic imports too', () => {
    const root = plantTree({
      'main/host.ts': "const page = await import('../renderer/app.js');\n",
      'src/x.ts': "const e = require('electron');\n",
    });
    expect(checkLayering(root).map((v) => v.rule).sort()).toEqual([
      'main must not import renderer',
      'src must not import electron',
    ]);
  });

  it('the mixture engine is entered through src/model/index only: none in the project, and a planted bypass is caught (types too)', () => {
    expect(checkModelEntry(projectRoot)).toEqual([]);
    const root = plantTree({
      'src/model/index.ts': "export * from './types.js';\n",
      'src/model/em.ts': "import { LOG_2PI } from './gaussian.js';\n",
      'src/runs/fit.ts': [
        "import { fitMixture } from '../model/index.js';",
        "import { choleskyLower } from '../model/gaussian.js';",
        "import type { MixtureModel } from '../model/types.js';",
      ].join('\n'),
      'main/worker.ts': "const engine = await import('../src/model/em.js');\n",
      'test/model/kernel.test.ts': "import { expectationStep } from '../../src/model/estep.js';\n",
    });
    expect(checkModelEntry(root).map((v) => `${v.file} ${v.specifier}`).sort()).toEqual([
      `${join('main', 'worker.ts')} ../src/model/em.js`,
      `${join('src', 'runs', 'fit.ts')} ../model/gaussian.js`,
      `${join('src', 'runs', 'fit.ts')} ../model/types.js`,
    ]);
  });
});
