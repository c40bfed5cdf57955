/**
 * Builds hostile workbooks for the memory tests: minimal, well-formed XLSX packages in which one
 * part inflates to gigabytes from a few megabytes. A deflate stream may be a run of blocks, so
 * a part is written as one block compressed once (ending in a sync flush, so it is byte-aligned
 * and refers to nothing before it) repeated as often as wanted, then a final empty block
 * (RFC 1951 §3.2.3). The CRC-32 is computed over the whole inflated content, so the package is
 * valid and only its size is hostile. Sizes stay under 4 GiB (no ZIP64 needed).
 */
import { closeSync, openSync, writeSync } from 'node:fs';
import { constants, crc32, deflateRawSync } from 'node:zlib';

interface Part {
  name: string;
  /** The inflated content, as pieces: `repeat` copies of `chunk` between `head` and `tail`. */
  head: string | Buffer;
  chunk?: string;
  repeat?: number;
  tail?: string;
  /** Uncompressed size written into the headers instead of the true one (a lying package). */
  declaredSize?: number;
}

const MAIN_NS = 'http://schemas.openxmlformats.org/spreadsheetml/2006/main';
const REL_NS = 'http://schemas.openxmlformats.org/officeDocument/2006/relationships';
const PKG_REL_NS = 'http://schemas.openxmlformats.org/package/2006/relationships';

function bytesOf(content: string | Buffer): Buffer {
  return typeof content === 'string' ? Buffer.from(content, 'utf8') : content;
}

function deflatePiece(content: string | Buffer, final: boolean): Buffer {
  return deflateRawSync(bytesOf(content), { level: 9, finishFlush: final ? constants.Z_FINISH : constants.Z_SYNC_FLUSH });
}

/** Writes a ZIP of the parts (each deflated); returns its size in bytes. */
function writeZip(path: string, parts: Part[]): number {
  const fd = openSync(path, 'w');
  let offset = 0;
  const write = (buffer: Buffer) => {
    writeSync(fd, buffer);
    offset += buffer.length;
  };
  const central: Buffer[] = [];
  try {
    for (const part of parts) {
      const name = Buffer.from(part.name, 'utf8');
      const head = deflatePiece(part.head, false);
      const chunk = part.chunk ? deflatePiece(part.chunk, false) : Buffer.alloc(0);
      const tail = deflatePiece(part.tail ?? '', true);
      const repeat = part.repeat ?? 0;
      const compressedSize = head.length + chunk.length * repeat + tail.length;
      const chunkBytes = Buffer.from(part.chunk ?? '', 'utf8');
      const trueSize = bytesOf(part.head).length + chunkBytes.length * repeat + Buffer.byteLength(part.tail ?? '');
      let crc = crc32(bytesOf(part.head));
      for (let index = 0; index < repeat; index += 1) crc = crc32(chunkBytes, crc);
      crc = crc32(Buffer.from(part.tail ?? '', 'utf8'), crc);
      const size = part.declaredSize ?? trueSize;
      if (compressedSize >= 2 ** 32 || size >= 2 ** 32) throw new RangeError('part too large for a ZIP without ZIP64');
      const localOffset = offset;
      const local = Buffer.alloc(30);
      local.writeUInt32LE(0x04034b50, 0);
      local.writeUInt16LE(20, 4);
      local.writeUInt16LE(0x0800, 6); // UTF-8 names
      local.writeUInt16LE(8, 8); // deflate
      local.writeUInt32LE(crc >>> 0, 14);
      local.writeUInt32LE(compressedSize, 18);
      local.writeUInt32LE(size, 22);
      local.writeUInt16LE(name.length, 26);
      write(local);
      write(name);
      write(head);
      for (let index = 0; index < repeat; index += 1) write(chunk);
      write(tail);
      const entry = Buffer.alloc(46);
      entry.writeUInt32LE(0x02014b50, 0);
      entry.writeUInt16LE(20, 4);
      entry.writeUInt16LE(20, 6);
      entry.writeUInt16LE(0x0800, 8);
      entry.writeUInt16LE(8, 10);
      entry.writeUInt32LE(crc >>> 0, 16);
      entry.writeUInt32LE(compressedSize, 20);
      entry.writeUInt32LE(size, 24);
      entry.writeUInt16LE(name.length, 28);
      entry.writeUInt32LE(localOffset, 42);
      central.push(entry, name);
    }
    const directoryOffset = offset;
    const directory = Buffer.concat(central);
    write(directory);
    const end = Buffer.alloc(22);
    end.writeUInt32LE(0x06054b50, 0);
    end.writeUInt16LE(parts.length, 8);
    end.writeUInt16LE(parts.length, 10);
    end.writeUInt32LE(directory.length, 12);
    end.writeUInt32LE(directoryOffset, 16);
    write(end);
    return offset;
  } finally {
    closeSync(fd);
  }
}

/** A small package of the given parts (name → text), for tests of how packages are read. */
export function writePackage(path: string, files: Record<string, string | Buffer>): string {
  writeZip(
    path,
    Object.entries(files).map(([name, head]) => ({ name, head })),
  );
  return path;
}

/** The package parts every workbook here shares: one sheet, "Receipts", with shared strings. */
function skeleton(): Part[] {
  return [
    {
      name: '[Content_Types].xml',
      head:
        '<?xml version="1.0" encoding="UTF-8"?><Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types">' +
        '<Default Extension="rels" ContentType="application/vnd.openxmlformats-package.relationships+xml"/>' +
        '<Default Extension="xml" ContentType="application/xml"/>' +
        '<Override PartName="/xl/workbook.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.sheet.main+xml"/>' +
        '<Override PartName="/xl/worksheets/sheet1.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml"/>' +
        '<Override PartName="/xl/sharedStrings.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.sharedStrings+xml"/>' +
        '<Override PartName="/xl/styles.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.styles+xml"/>' +
        '</Types>',
    },
    {
      name: '_rels/.rels',
      head: `<?xml version="1.0" encoding="UTF-8"?><Relationships xmlns="${PKG_REL_NS}"><Relationship Id="rId1" Type="${REL_NS}/officeDocument" Target="xl/workbook.xml"/></Relationships>`,
    },
    {
      name: 'xl/workbook.xml',
      head: `<?xml version="1.0" encoding="UTF-8"?><workbook xmlns="${MAIN_NS}" xmlns:r="${REL_NS}"><sheets><sheet name="Receipts" sheetId="1" r:id="rId1"/></sheets></workbook>`,
    },
    {
      name: 'xl/_rels/workbook.xml.rels',
      head:
        `<?xml version="1.0" encoding="UTF-8"?><Relationships xmlns="${PKG_REL_NS}">` +
        `<Relationship Id="rId1" Type="${REL_NS}/worksheet" Target="worksheets/sheet1.xml"/>` +
        `<Relationship Id="rId2" Type="${REL_NS}/sharedStrings" Target="sharedStrings.xml"/>` +
        `<Relationship Id="rId3" Type="${REL_NS}/styles" Target="styles.xml"/></Relationships>`,
    },
    {
      name: 'xl/styles.xml',
      head:
        `<?xml version="1.0" encoding="UTF-8"?><styleSheet xmlns="${MAIN_NS}"><fonts count="1"><font><sz val="11"/><name val="Calibri"/></font></fonts>` +
        '<fills count="1"><fill><patternFill patternType="none"/></fill></fills><borders count="1"><border/></borders>' +
        '<cellStyleXfs count="1"><xf numFmtId="0" fontId="0" fillId="0" borderId="0"/></cellStyleXfs>' +
        '<cellXfs count="1"><xf numFmtId="0" fontId="0" fillId="0" borderId="0" xfId="0"/></cellXfs></styleSheet>',
    },
  ];
}

const HEADER_ROW = '<row r="1"><c r="A1" t="s"><v>0</v></c><c r="B1" t="s"><v>1</v></c><c r="C1" t="s"><v>2</v></c></row>';
const DATA_ROW = '<row r="2"><c r="A2" t="s"><v>3</v></c><c r="B2" t="s"><v>4</v></c><c r="C2"><v>12.5</v></c></row>';

function sheetPart(rows: { chunk?: string; repeat?: number } = {}): Part {
  return {
    name: 'xl/worksheets/sheet1.xml',
    head: `<?xml version="1.0" encoding="UTF-8"?><worksheet xmlns="${MAIN_NS}"><sheetData>${HEADER_ROW}${DATA_ROW}`,
    chunk: rows.chunk,
    repeat: rows.repeat,
    tail: '</sheetData></worksheet>',
  };
}

const SHARED_HEAD = `<?xml version="1.0" encoding="UTF-8"?><sst xmlns="${MAIN_NS}"><si><t>customer_id</t></si><si><t>date</t></si><si><t>amount</t></si><si><t>LM00001</t></si><si><t>2026-01-05</t></si>`;

function repeatTo(unit: string, bytes: number): string {
  return unit.repeat(Math.max(1, Math.floor(bytes / Buffer.byteLength(unit))));
}

export interface CraftedWorkbook {
  path: string;
  /** Size of the file. */
  bytes: number;
  /** What the hostile part inflates to. */
  inflatedBytes: number;
}

const CHUNK_BYTES = 1 << 20;

/**
 * A workbook whose shared-strings part holds millions of short strings, inflating to about
 * `inflatedBytes` (default 3 GB) from a few megabytes.
 */
export function sharedStringsBomb(path: string, inflatedBytes = 3e9, declaredSize?: number): CraftedWorkbook {
  const chunk = repeatTo('<si><t>LM0000000000000000000000000000000000000000000001</t></si>', CHUNK_BYTES);
  const repeat = Math.ceil(inflatedBytes / Buffer.byteLength(chunk));
  const parts = [
    ...skeleton(),
    { name: 'xl/sharedStrings.xml', head: SHARED_HEAD, chunk, repeat, tail: '</sst>', declaredSize },
    sheetPart(),
  ];
  return { path, bytes: writeZip(path, parts), inflatedBytes: Buffer.byteLength(chunk) * repeat };
}

/**
 * A workbook whose one sheet repeats a row of empty cells until it inflates to about
 * `inflatedBytes`: nothing to store, only XML to stream (so a reader that streams takes minutes
 * at flat memory rather than filling the database).
 */
export function sheetXmlBomb(path: string, inflatedBytes = 3e9): CraftedWorkbook {
  const chunk = repeatTo('<row r="3"><c r="A3"/><c r="B3"/><c r="C3"/></row>', CHUNK_BYTES);
  const repeat = Math.ceil(inflatedBytes / Buffer.byteLength(chunk));
  const parts = [
    ...skeleton(),
    { name: 'xl/sharedStrings.xml', head: SHARED_HEAD, tail: '</sst>' },
    sheetPart({ chunk, repeat }),
  ];
  return { path, bytes: writeZip(path, parts), inflatedBytes: Buffer.byteLength(chunk) * repeat };
}
