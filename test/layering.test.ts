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

const found = (root: string) => checkLayering(root).map((v) => `${v.file}: ${v.specifier ? `${v.specifier}: ` : ''}${v.rule}`);

describe('layering rules (DESIGN.md §2)', () => {
  it('the project itself has no violations', () => {
    expect(checkLayering(projectRoot)).toEqual([]);
  });

  it('catches src importing electron, react, main, demo-data and test', () => {
    const root = plantTree({
      'src/model/a.ts': [
        "import { app } from 'electron';",
        "import React from 'react';",
        "import x from '../../main/window.js';",
        "import sample from '../../demo-data/sample/x.js';",
        "import { helper } from '../../test/support/x.js';",
      ].join('\n'),
      'main/window.ts': 'export default 1;\n',
    });
    expect(found(root)).toEqual([
      'src/model/a.ts: electron: src must not import electron',
      'src/model/a.ts: react: src must not import react',
      'src/model/a.ts: ../../main/window.js: src must not import main',
      'src/model/a.ts: ../../demo-data/sample/x.js: src must not import demo-data',
      'src/model/a.ts: ../../test/support/x.js: src must not import test',
    ]);
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
    expect(checkLayering(root).map((v) => `${v.specifier}: ${v.rule}`)).toEqual([
      'node:fs: renderer must not import Node built-ins',
      'path: renderer must not import Node built-ins',
      'better-sqlite3: renderer must not import better-sqlite3',
      '../main/host.js: renderer must not import main',
      '../src/model/em.js: renderer may only import types from src/api',
      '../src/api/contract.js: renderer may only import types from src/api',
    ]);
  });

  it('catches main importing renderer or reaching past src/api, and dynamic imports too', () => {
    const root = plantTree({
      'main/host.ts': "const page = await import('../renderer/app.js');\nimport { runSegmentation } from '../src/runs/run.js';\nimport { callApi } from '../src/api/handlers.js';\n",
      'src/x.ts': "const e = require('electron');\n",
    });
    expect(found(root).sort()).toEqual([
      'main/host.ts: ../renderer/app.js: main must not import renderer',
      'main/host.ts: ../src/runs/run.js: main may import from src only src/api',
      'src/x.ts: electron: src must not import electron',
      'src/x.ts: src/x.ts has no layer',
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

  it('keeps demo-data free of code that reaches into src', () => {
    const root = plantTree({ 'demo-data/generator/generate.ts': "import { InputError } from '../../src/errors.js';\n" });
    expect(found(root)).toEqual(['demo-data/generator/generate.ts: ../../src/errors.js: demo-data must not import src (the generator lives in src/demo)']);
  });

  it('catches a lower layer of src importing a higher one, but lets every layer take the contract\'s types', () => {
    const root = plantTree({
      'src/errors.ts': "import { fit } from './model/em.js';\n",
      'src/model/em.ts': "import { run } from '../runs/run.js';\nexport const fit = 1;\n",
      'src/store/repo.ts': "import { startRunInput } from '../api/contract.js';\nimport type { RunSettings } from '../api/contract.js';\nimport type { Handler } from '../api/handlers.js';\n",
      'src/runs/run.ts': "import { callApi } from '../api/handlers.js';\nimport type { RunSummary } from '../api/contract/runs.js';\nimport { fit } from '../model/em.js';\nexport const run = 1;\n",
      'src/export/x.ts': "import { runCli } from '../cli/program.js';\nimport { run } from '../runs/run.js';\n",
      'src/warehouse/sql.ts': "import { fit } from '../model/em.js';\nimport { table } from '../features/compute.js';\nimport { db } from '../store/repo.js';\n",
      'src/api/handlers.ts': "import { register } from '../cli/commands/index.js';\nimport { run } from '../runs/run.js';\n",
      'src/cli/program.ts': "import { callApi } from '../api/handlers.js';\n",
    });
    expect(found(root).sort()).toEqual([
      "src/api/handlers.ts: ../cli/commands/index.js: src/api must not import src/cli",
      'src/errors.ts: ./model/em.js: src/errors.ts (shared) must not import src/model (bottom)',
      'src/export/x.ts: ../cli/program.js: src/export (middle) must not import src/cli (top)',
      'src/model/em.ts: ../runs/run.js: src/model (bottom) must not import src/runs (middle)',
      'src/runs/run.ts: ../api/handlers.js: src/runs (middle) must not import src/api (top)',
      'src/store/repo.ts: ../api/contract.js: src/store (bottom) must not import src/api (top) except types',
      'src/store/repo.ts: ../api/handlers.js: src/store (bottom) must not import src/api (top)',
    ]);
  });

  it('asks for rules for code in a new place: a top-level folder or a part of src without a layer', () => {
    const root = plantTree({ 'tools/build.ts': 'export {};\n', 'src/reports/weekly.ts': 'export {};\n', 'test/anything.ts': "import x from '../src/reports/weekly.js';\n" });
    expect(found(root).sort()).toEqual(['src/reports/weekly.ts: src/reports has no layer', 'tools/build.ts: no layering rules for the top-level folder tools']);
  });
});
