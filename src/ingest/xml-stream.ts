/**
 * A streaming XML reader for workbook parts on top of saxes (a strict, well-formedness-checking
 * SAX parser; it expands only the predefined and character entities, so entity-expansion bombs
 * are refused as undefined entities). Element names are handed on without their prefix:
 * SpreadsheetML is written with and without one (`<c>`, `<x:c>`).
 *
 * saxes holds a token (a text node, an attribute, a comment) whole until it ends. So that a
 * crafted part cannot grow one token without bound, more than MAX_TOKEN_CHARS characters fed
 * without any parser event is refused. The longest text a cell holds is 32,767 characters
 * (Excel's limit, from memory), well under it even with every character escaped.
 */
import { SaxesParser } from 'saxes';
import { InputError } from '../errors.js';

export const MAX_TOKEN_CHARS = 1024 * 1024;
/** Text is fed in pieces of at most this many characters, so the token check runs often enough. */
const PIECE_CHARS = 64 * 1024;

export interface XmlHandlers {
  open?: (name: string, attributes: Record<string, string>) => void;
  close?: (name: string) => void;
  text?: (text: string) => void;
}

function localName(name: string): string {
  const colon = name.indexOf(':');
  return colon < 0 ? name : name.slice(colon + 1);
}

export class XmlStream {
  private readonly parser = new SaxesParser({ xmlns: false, position: false });
  private fed = 0;
  private lastEventAt = 0;

  /** `what` names the part in messages ("the sheet "Receipts""). */
  constructor(
    private readonly what: string,
    handlers: XmlHandlers,
  ) {
    const seen = () => {
      this.lastEventAt = this.fed;
    };
    const { open, close, text } = handlers;
    this.parser.on('opentag', (tag) => {
      seen();
      open?.(localName(tag.name), tag.attributes as Record<string, string>);
    });
    this.parser.on('closetag', (tag) => {
      seen();
      close?.(localName(tag.name));
    });
    this.parser.on('text', (value) => {
      seen();
      text?.(value);
    });
    this.parser.on('cdata', (value) => {
      seen();
      text?.(value);
    });
    for (const other of ['comment', 'processinginstruction', 'doctype', 'xmldecl'] as const) this.parser.on(other, seen);
    this.parser.on('error', (error) => {
      throw new InputError(`${what} is not well-formed XML: ${error.message}`);
    });
  }

  write(chunk: string): void {
    for (let start = 0; start < chunk.length; start += PIECE_CHARS) {
      const piece = start === 0 && chunk.length <= PIECE_CHARS ? chunk : chunk.slice(start, start + PIECE_CHARS);
      this.fed += piece.length;
      this.parser.write(piece);
      if (this.fed - this.lastEventAt > MAX_TOKEN_CHARS) {
        throw new InputError(
          `${this.what} holds a single value or tag longer than ${MAX_TOKEN_CHARS.toLocaleString('en-GB')} characters; no spreadsheet cell holds that much. The file may be damaged or built to exhaust memory.`,
        );
      }
    }
  }

  close(): void {
    this.parser.close();
  }
}

/** Parses a whole part from its pieces. */
export async function parseXml(chunks: AsyncIterable<string>, what: string, handlers: XmlHandlers): Promise<void> {
  const stream = new XmlStream(what, handlers);
  for await (const chunk of chunks) stream.write(chunk);
  stream.close();
}

/** `_xHHHH_` escapes of OOXML strings (ECMA-376 part 1, ST_Xstring) → the characters they stand for. */
export function decodeOoxmlEscapes(text: string): string {
  if (!text.includes('_x')) return text;
  return text.replace(/_x([0-9A-Fa-f]{4})_/g, (_, hex: string) => String.fromCharCode(Number.parseInt(hex, 16)));
}
