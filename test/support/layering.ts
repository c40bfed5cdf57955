import { readdirSync, readFileSync, statSync } from 'node:fs';
import { builtinModules } from 'node:module';
import { dirname, join, relative, resolve, sep } from 'node:path';
import ts from 'typescript';

/**
 * Reads the import graph of the project's three code folders and reports every import that
 * breaks the layering rules of DESIGN.md §2:
 * - src never imports main, renderer, electron or react;
 * - renderer never imports Node built-ins, better-sqlite3 or main (type-only imports of src/api
 *   are the one way into src);
 * - main never imports renderer.
 */
export interface LayeringViolation {
  file: string;
  specifier: string;
  rule: string;
}

const codeExtensions = ['.ts', '.tsx', '.mts', '.cts', '.js', '.mjs', '.cjs', '.jsx'];
const nodeBuiltins = new Set(builtinModules.flatMap((name) => [name, `node:${name}`]));

/** Build-tool configs (vite.config.ts) run in Node at build time, not in the app: not layered. */
function isLayeredCode(fileName: string): boolean {
  if (fileName.endsWith('.d.ts') || /\.config\.[cm]?[jt]s$/.test(fileName)) return false;
  return codeExtensions.some((ext) => fileName.endsWith(ext));
}

function listCodeFiles(folder: string): string[] {
  let entries: string[];
  try {
    entries = readdirSync(folder);
  } catch {
    return [];
  }
  const files: string[] = [];
  for (const entry of entries) {
    if (entry === 'node_modules' || entry === 'dist') continue;
    const path = join(folder, entry);
    if (statSync(path).isDirectory()) files.push(...listCodeFiles(path));
    else if (isLayeredCode(entry)) files.push(path);
  }
  return files;
}

/** The top-level folder an import lands in, for relative specifiers; null for packages. */
function targetFolder(root: string, file: string, specifier: string): string | null {
  if (!specifier.startsWith('.')) return null;
  const target = relative(root, resolve(dirname(file), specifier));
  return target.split(sep)[0] ?? null;
}

function packageName(specifier: string): string {
  const parts = specifier.split('/');
  return specifier.startsWith('@') ? parts.slice(0, 2).join('/') : parts[0];
}

function importsOf(file: string): { specifier: string; typeOnly: boolean }[] {
  const source = readFileSync(file, 'utf8');
  // Static declarations carry their own type-only flag; whatever preProcessFile finds beyond
  // them (dynamic import(), require()) is a value import.
  const sourceFile = ts.createSourceFile(file, source, ts.ScriptTarget.Latest, false);
  const declared: { specifier: string; typeOnly: boolean }[] = [];
  for (const statement of sourceFile.statements) {
    if ((ts.isImportDeclaration(statement) || ts.isExportDeclaration(statement)) && statement.moduleSpecifier) {
      const specifier = (statement.moduleSpecifier as ts.StringLiteral).text;
      const typeOnly = ts.isImportDeclaration(statement)
        ? Boolean(statement.importClause?.isTypeOnly)
        : statement.isTypeOnly;
      declared.push({ specifier, typeOnly });
    }
  }
  const remaining = ts.preProcessFile(source, true, true).importedFiles.map((ref) => ref.fileName);
  for (const { specifier } of declared) {
    const index = remaining.indexOf(specifier);
    if (index >= 0) remaining.splice(index, 1);
  }
  return [...declared, ...remaining.map((specifier) => ({ specifier, typeOnly: false }))];
}

export function checkLayering(root: string): LayeringViolation[] {
  const violations: LayeringViolation[] = [];
  const check = (folder: string, test: (specifier: string, typeOnly: boolean, file: string) => string | null) => {
    for (const file of listCodeFiles(join(root, folder))) {
      for (const { specifier, typeOnly } of importsOf(file)) {
        const rule = test(specifier, typeOnly, file);
        if (rule) violations.push({ file: relative(root, file), specifier, rule });
      }
    }
  };

  check('src', (specifier, _typeOnly, file) => {
    const folder = targetFolder(root, file, specifier);
    if (folder === 'main' || folder === 'renderer') return `src must not import ${folder}`;
    const name = packageName(specifier);
    if (name === 'electron' || name === 'react' || name === 'react-dom') return `src must not import ${name}`;
    return null;
  });

  check('renderer', (specifier, typeOnly, file) => {
    if (nodeBuiltins.has(specifier) || nodeBuiltins.has(packageName(specifier))) {
      return 'renderer must not import Node built-ins';
    }
    if (packageName(specifier) === 'better-sqlite3') return 'renderer must not import better-sqlite3';
    const folder = targetFolder(root, file, specifier);
    if (folder === 'main') return 'renderer must not import main';
    if (folder === 'src') {
      const target = relative(join(root, 'src'), resolve(dirname(file), specifier));
      if (!typeOnly || !target.startsWith(`api${sep}`) && target !== 'api') {
        return 'renderer may only import types from src/api';
      }
    }
    return null;
  });

  check('main', (specifier, _typeOnly, file) =>
    targetFolder(root, file, specifier) === 'renderer' ? 'main must not import renderer' : null,
  );

  return violations;
}

/**
 * The mixture engine has one entry: code outside src/model imports src/model/index only
 * (value or type imports alike), so the engine can be reorganised behind it. Looks at every
 * layered folder (src, main, renderer) and every other top-level code folder but test, whose
 * unit tests may reach into the engine's modules.
 */
export function checkModelEntry(root: string): LayeringViolation[] {
  const modelFolder = join(root, 'src', 'model');
  const entry = join(modelFolder, 'index');
  const violations: LayeringViolation[] = [];
  let folders: string[];
  try {
    folders = readdirSync(root).filter((name) => !name.startsWith('.') && name !== 'node_modules' && name !== 'test' && name !== 'dist');
  } catch {
    return [];
  }
  for (const folder of folders) {
    if (!statSync(join(root, folder)).isDirectory()) continue;
    for (const file of listCodeFiles(join(root, folder))) {
      if (file.startsWith(modelFolder + sep)) continue;
      for (const { specifier } of importsOf(file)) {
        if (!specifier.startsWith('.')) continue;
        const target = resolve(dirname(file), specifier);
        if (!target.startsWith(modelFolder + sep)) continue;
        if (target.replace(/\.(js|ts)$/, '') === entry) continue;
        violations.push({ file: relative(root, file), specifier, rule: 'code outside src/model imports only src/model/index' });
      }
    }
  }
  return violations;
}
