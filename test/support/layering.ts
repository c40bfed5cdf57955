import { readdirSync, readFileSync, statSync } from 'node:fs';
import { builtinModules } from 'node:module';
import { dirname, join, relative, resolve, sep } from 'node:path';
import ts from 'typescript';

/**
 * Reads the import graph of the project's code and reports every import that breaks the layering
 * of DESIGN.md §2. Each rule is one function over one import; `checkLayering` runs them all.
 *
 * Top-level folders (every folder holding code has rules; test/ is exempt, dot-folders are tools):
 * - src never imports main, renderer, demo-data or test, nor electron or react;
 * - renderer never imports Node built-ins, better-sqlite3 or main (type-only imports of src/api
 *   are its one way into src);
 * - main never imports renderer, and reaches src only through src/api;
 * - demo-data holds data; code placed there must not import src (nor src demo-data).
 *
 * Inside src, layers from the bottom up (a lower layer never imports a higher one):
 * - shared: errors.ts and workers/ (error kinds, starting a worker thread), used by every layer;
 * - bottom: model (the mixture engine) and store (SQLite);
 * - middle: features, ingest, runs, export, demo, warehouse (may import the bottom and each other);
 * - top: api, then cli (cli imports api; api never imports cli).
 * Type-only imports of the contract (src/api/contract.ts and src/api/contract/) are allowed from
 * every layer: the core takes and returns the contract's types.
 */
export interface LayeringViolation {
  file: string;
  specifier: string;
  rule: string;
}

const codeExtensions = ['.ts', '.tsx', '.mts', '.cts', '.js', '.mjs', '.cjs', '.jsx'];
const nodeBuiltins = new Set(builtinModules.flatMap((name) => [name, `node:${name}`]));

/** Top-level folders that are not the product's layered code. */
const exemptFolders = new Set(['test', 'node_modules', 'dist', 'test-artifacts']);

/** The layers inside src, bottom up; a folder (or file) name maps to its layer's rank. */
export const srcLayers: readonly { name: string; rank: number; parts: readonly string[] }[] = [
  { name: 'shared', rank: 0, parts: ['errors.ts', 'workers'] },
  { name: 'bottom', rank: 1, parts: ['model', 'store'] },
  { name: 'middle', rank: 2, parts: ['features', 'ingest', 'runs', 'export', 'demo', 'warehouse'] },
  { name: 'top', rank: 3, parts: ['api'] },
  { name: 'top', rank: 4, parts: ['cli'] },
];

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
      const typeOnly = ts.isImportDeclaration(statement) ? Boolean(statement.importClause?.isTypeOnly) : statement.isTypeOnly;
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

/** One import as the rules see it: who imports, what, and where a relative import lands. */
export interface ImportEdge {
  /** Importing file, relative to the project root with '/' separators. */
  from: string;
  specifier: string;
  typeOnly: boolean;
  /** Target relative to the root with '/' separators, for relative specifiers; null for packages. */
  to: string | null;
}

export type LayeringRule = (edge: ImportEdge) => string | null;

const topFolder = (path: string) => path.split('/')[0];
const insideSrc = (path: string) => (path.startsWith('src/') ? path.slice(4) : null);

/** A path inside src → its layer, or null for a part no layer names. */
function layerOf(srcPath: string): (typeof srcLayers)[number] | null {
  const first = srcPath.split('/')[0];
  const part = srcPath.includes('/') ? first : srcPath.replace(/\.[cm]?[jt]sx?$/, '.ts');
  return srcLayers.find((layer) => layer.parts.includes(part)) ?? null;
}

const isContract = (srcPath: string) => srcPath === 'api/contract.ts' || srcPath === 'api/contract.js' || srcPath.startsWith('api/contract/');

// ---------------------------------------------------------------------------------------------
// The rules, one concern each

/** src stays the Node core: no shell, no screens, no data folder, no tests, no Electron or React. */
export const srcStaysTheCore: LayeringRule = ({ from, specifier, to }) => {
  if (topFolder(from) !== 'src') return null;
  const folder = to === null ? null : topFolder(to);
  if (folder === 'main' || folder === 'renderer' || folder === 'demo-data' || folder === 'test') return `src must not import ${folder}`;
  const name = packageName(specifier);
  if (to === null && (name === 'electron' || name === 'react' || name === 'react-dom')) return `src must not import ${name}`;
  return null;
};

/** The renderer runs in the browser sandbox and speaks to the core only through the contract's types. */
export const rendererSpeaksOnlyTheContract: LayeringRule = ({ from, specifier, typeOnly, to }) => {
  if (topFolder(from) !== 'renderer') return null;
  if (nodeBuiltins.has(specifier) || nodeBuiltins.has(packageName(specifier))) return 'renderer must not import Node built-ins';
  if (packageName(specifier) === 'better-sqlite3') return 'renderer must not import better-sqlite3';
  if (to === null) return null;
  if (topFolder(to) === 'main') return 'renderer must not import main';
  const target = insideSrc(to);
  if (target !== null && (!typeOnly || !(target === 'api' || target.startsWith('api/')))) return 'renderer may only import types from src/api';
  return null;
};

/** The Electron shell wires src/api into windows; it never reaches past the API or into the screens' code. */
export const mainWiresTheApi: LayeringRule = ({ from, to }) => {
  if (topFolder(from) !== 'main' || to === null) return null;
  if (topFolder(to) === 'renderer') return 'main must not import renderer';
  const target = insideSrc(to);
  if (target !== null && !target.startsWith('api/')) return 'main may import from src only src/api';
  return null;
};

/** demo-data is data (the committed sample, the messy files): code there must not import src. */
export const demoDataHoldsData: LayeringRule = ({ from, to }) => {
  if (topFolder(from) !== 'demo-data' || to === null) return null;
  return topFolder(to) === 'src' ? 'demo-data must not import src (the generator lives in src/demo)' : null;
};

/** Inside src a lower layer never imports a higher one, except the contract's types. */
export const srcLayersPointDown: LayeringRule = ({ from, typeOnly, to }) => {
  const source = insideSrc(from);
  const target = to === null ? null : insideSrc(to);
  if (source === null || target === null) return null;
  const sourceLayer = layerOf(source);
  const targetLayer = layerOf(target);
  if (!sourceLayer || !targetLayer || targetLayer.rank <= sourceLayer.rank) return null;
  if (typeOnly && isContract(target)) return null;
  const part = (path: string) => `src/${path.split('/')[0]}`;
  if (sourceLayer.parts.includes('api') && targetLayer.parts.includes('cli')) return 'src/api must not import src/cli';
  return `${part(source)} (${sourceLayer.name}) must not import ${part(target)} (${targetLayer.name})${isContract(target) ? ' except types' : ''}`;
};

export const importRules: readonly LayeringRule[] = [srcStaysTheCore, rendererSpeaksOnlyTheContract, mainWiresTheApi, demoDataHoldsData, srcLayersPointDown];

/** Code in places no rule knows: a top-level folder, or a part of src without a layer. */
function unplacedCode(root: string, files: readonly string[]): LayeringViolation[] {
  const known = new Set(['src', 'renderer', 'main', 'demo-data']);
  const violations: LayeringViolation[] = [];
  for (const file of files) {
    const path = relative(root, file).split(sep).join('/');
    const folder = topFolder(path);
    if (!known.has(folder)) violations.push({ file: path, specifier: '', rule: `no layering rules for the top-level folder ${folder}` });
    const source = insideSrc(path);
    if (source !== null && !layerOf(source)) violations.push({ file: path, specifier: '', rule: `src/${source.split('/')[0]} has no layer` });
  }
  return violations;
}

export function checkLayering(root: string, rules: readonly LayeringRule[] = importRules): LayeringViolation[] {
  const folders = readdirSync(root).filter((entry) => !entry.startsWith('.') && !exemptFolders.has(entry) && statSync(join(root, entry)).isDirectory());
  const files = folders.flatMap((folder) => listCodeFiles(join(root, folder)));
  const violations = unplacedCode(root, files);
  for (const file of files) {
    const from = relative(root, file).split(sep).join('/');
    for (const { specifier, typeOnly } of importsOf(file)) {
      const to = specifier.startsWith('.') ? relative(root, resolve(dirname(file), specifier)).split(sep).join('/') : null;
      for (const rule of rules) {
        const broken = rule({ from, specifier, typeOnly, to });
        if (broken) violations.push({ file: from, specifier, rule: broken });
      }
    }
  }
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
