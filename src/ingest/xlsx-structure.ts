/**
 * What a workbook is made of, read the way the Open Packaging Conventions say (ECMA-376 part 2):
 * the package relationships name the workbook part; the workbook part lists the sheets in tab
 * order, each pointing through its relationships part at the part that holds it. Targets may be
 * relative (with `.` and `..`) or absolute, percent-encoded, and a part may have any name.
 * Also read here: the date system and which cell styles show dates.
 */
import { InputError } from '../errors.js';
import { PART_LIMITS, WorkbookPackage } from './workbook-package.js';
import { parseXml } from './xml-stream.js';

export interface Relationship {
  /** The relationship type's last segment: `officeDocument`, `worksheet`, `styles`, … */
  type: string;
  /** The target part name, resolved to an absolute part name (`/xl/worksheets/sheet1.xml`). */
  part: string;
  external: boolean;
}

export type SheetKind = 'worksheet' | 'chartsheet' | 'other';

export interface SheetTab {
  name: string;
  /** Hidden (or very hidden) tabs are not shown to the user. */
  hidden: boolean;
  kind: SheetKind;
  /** The part holding the sheet; null when its relationship is missing. */
  part: string | null;
}

export interface WorkbookStructure {
  /** Every tab in the order the workbook shows them. */
  tabs: SheetTab[];
  /** Dates count from 1904-01-01 instead of 1900 (older Mac workbooks; xlsxwriter's date_1904). */
  date1904: boolean;
  stylesPart: string | null;
  sharedStringsPart: string | null;
}

/** Absolute part name of `target` as seen from `sourcePart` (RFC 3986 §5.2 reference resolution on part names). */
export function resolvePartName(sourcePart: string, target: string): string {
  const clean = target.replace(/[?#].*$/, '');
  const base = sourcePart.slice(0, sourcePart.lastIndexOf('/') + 1);
  const joined = clean.startsWith('/') ? clean : `${base}${clean}`;
  const segments: string[] = [];
  for (const segment of joined.split('/')) {
    if (segment === '' || segment === '.') continue;
    if (segment === '..') segments.pop();
    else segments.push(segment);
  }
  return `/${segments.join('/')}`;
}

/** The relationships part of a part: `/xl/workbook.xml` → `/xl/_rels/workbook.xml.rels`; the package's is `/_rels/.rels`. */
export function relationshipsPartOf(sourcePart: string): string {
  const slash = sourcePart.lastIndexOf('/');
  return `${sourcePart.slice(0, slash + 1)}_rels/${sourcePart.slice(slash + 1)}.rels`;
}

function lastSegment(uri: string): string {
  return uri.slice(uri.lastIndexOf('/') + 1);
}

/** The relationships of a part (empty when it has none), by id. */
export async function readRelationships(pkg: WorkbookPackage, sourcePart: string): Promise<Map<string, Relationship>> {
  const relsPart = relationshipsPartOf(sourcePart);
  const relationships = new Map<string, Relationship>();
  if (!pkg.has(relsPart)) return relationships;
  await parseXml(pkg.textChunks(relsPart, PART_LIMITS.structure), `The relationships part ${relsPart}`, {
    open: (name, attributes) => {
      if (name !== 'Relationship' || !attributes.Id || attributes.Target === undefined) return;
      const external = attributes.TargetMode === 'External';
      relationships.set(attributes.Id, {
        type: lastSegment(attributes.Type ?? ''),
        part: external ? attributes.Target : resolvePartName(sourcePart === '/' ? '/' : sourcePart, attributes.Target),
        external,
      });
    },
  });
  return relationships;
}

function firstOfType(relationships: Map<string, Relationship>, type: string): string | null {
  for (const relationship of relationships.values()) if (relationship.type === type && !relationship.external) return relationship.part;
  return null;
}

function isTrue(value: string | undefined): boolean {
  return value === '1' || value === 'true';
}

/** Reads the package and workbook relationships and the workbook part. */
export async function readWorkbookStructure(pkg: WorkbookPackage, path: string): Promise<WorkbookStructure> {
  const packageRelationships = await readRelationships(pkg, '/');
  const workbookPart = firstOfType(packageRelationships, 'officeDocument') ?? (pkg.has('/xl/workbook.xml') ? '/xl/workbook.xml' : null);
  if (workbookPart === null || !pkg.has(workbookPart)) {
    throw new InputError(`${path} is a ZIP package but holds no workbook (no officeDocument part); is it an XLSX file?`);
  }
  const relationships = await readRelationships(pkg, workbookPart);
  const tabs: SheetTab[] = [];
  let date1904 = false;
  // Prefixes bound to the relationships namespace (transitional or strict), usually "r".
  const relationshipPrefixes = new Set<string>();
  let inSheets = false;
  await parseXml(pkg.textChunks(workbookPart, PART_LIMITS.structure), `The workbook part ${workbookPart}`, {
    open: (name, attributes) => {
      for (const [key, value] of Object.entries(attributes)) {
        if (key.startsWith('xmlns:') && /\/relationships$/.test(value)) relationshipPrefixes.add(key.slice(6));
      }
      if (name === 'workbookPr') date1904 = isTrue(attributes.date1904);
      else if (name === 'sheets') inSheets = true;
      else if (name === 'sheet' && inSheets) {
        let relationshipId: string | undefined;
        for (const prefix of relationshipPrefixes) relationshipId ??= attributes[`${prefix}:id`];
        const relationship = relationshipId === undefined ? undefined : relationships.get(relationshipId);
        const type = relationship?.type;
        tabs.push({
          name: attributes.name ?? '',
          hidden: attributes.state === 'hidden' || attributes.state === 'veryHidden',
          kind: type === 'worksheet' ? 'worksheet' : type === 'chartsheet' ? 'chartsheet' : relationship ? 'other' : 'worksheet',
          part: relationship && !relationship.external ? relationship.part : null,
        });
      }
    },
    close: (name) => {
      if (name === 'sheets') inSheets = false;
    },
  });
  return {
    tabs,
    date1904,
    stylesPart: firstOfType(relationships, 'styles'),
    sharedStringsPart: firstOfType(relationships, 'sharedStrings'),
  };
}

/** Built-in number formats that show dates or times (ECMA-376 part 1 §18.8.30; 27–36 and 50–58 are East Asian dates, from memory). */
function isBuiltInDateFormat(id: number): boolean {
  return (id >= 14 && id <= 22) || (id >= 27 && id <= 36) || (id >= 45 && id <= 47) || (id >= 50 && id <= 58);
}

/**
 * Whether a format code shows a date or time: a d, m, y, h or s outside quoted text, escaped
 * characters, padding and fill (`_x`, `*x`) and bracketed colours or conditions; `[h]`-style
 * elapsed times count. Only the first section (positive numbers) matters.
 */
export function isDateFormatCode(code: string): boolean {
  const section = code.split(/;(?=(?:[^"]*"[^"]*")*[^"]*$)/)[0] ?? '';
  const stripped = section
    .replace(/"[^"]*"/g, '')
    .replace(/\\./g, '')
    .replace(/[_*]./g, '')
    .replace(/\[(?![hms]+\])[^\]]*\]/gi, '');
  if (/^general$/i.test(stripped.trim())) return false;
  return /[dmyhs]/i.test(stripped);
}

/** For each cell style (index into cellXfs), whether it shows a date or time. */
export async function readDateStyles(pkg: WorkbookPackage, stylesPart: string | null): Promise<boolean[]> {
  const flags: boolean[] = [];
  if (stylesPart === null || !pkg.has(stylesPart)) return flags;
  const customFormats = new Map<number, boolean>();
  let inCellXfs = false;
  await parseXml(pkg.textChunks(stylesPart, PART_LIMITS.styles), `The styles part ${stylesPart}`, {
    open: (name, attributes) => {
      if (name === 'numFmt' && attributes.numFmtId !== undefined) {
        customFormats.set(Number(attributes.numFmtId), isDateFormatCode(attributes.formatCode ?? ''));
      } else if (name === 'cellXfs') inCellXfs = true;
      else if (name === 'xf' && inCellXfs) {
        const id = Number(attributes.numFmtId ?? 0);
        flags.push(customFormats.get(id) ?? isBuiltInDateFormat(id));
      }
    },
    close: (name) => {
      if (name === 'cellXfs') inCellXfs = false;
    },
  });
  return flags;
}
