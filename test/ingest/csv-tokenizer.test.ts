import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { CsvTokenizer, tokenizeCsv, type CsvRecord } from '../../src/ingest/csv-tokenizer.js';
import { sniffDelimiter } from '../../src/ingest/csv-reader.js';

const fieldsOf = (text: string, delimiter = ',') => tokenizeCsv(text, delimiter).map((record) => record.fields);

// The examples are those of RFC 4180 ("Common Format and MIME Type for CSV Files", 2005), §2.
describe('RFC 4180 §2 examples', () => {
  it('rule 1: records separated by CRLF', () => {
    expect(fieldsOf('aaa,bbb,ccc\r\nzzz,yyy,xxx\r\n')).toEqual([
      ['aaa', 'bbb', 'ccc'],
      ['zzz', 'yyy', 'xxx'],
    ]);
  });

  it('rule 2: the last record may lack a line break', () => {
    expect(fieldsOf('aaa,bbb,ccc\r\nzzz,yyy,xxx')).toEqual([
      ['aaa', 'bbb', 'ccc'],
      ['zzz', 'yyy', 'xxx'],
    ]);
  });

  it('rule 3: an optional header line has the same format', () => {
    expect(fieldsOf('field_name,field_name,field_name\r\naaa,bbb,ccc\r\nzzz,yyy,xxx\r\n')).toEqual([
      ['field_name', 'field_name', 'field_name'],
      ['aaa', 'bbb', 'ccc'],
      ['zzz', 'yyy', 'xxx'],
    ]);
  });

  it('rule 4: spaces are part of a field', () => {
    expect(fieldsOf(' aaa , bbb,ccc ')).toEqual([[' aaa ', ' bbb', 'ccc ']]);
  });

  it('rule 5: fields may be enclosed in double quotes', () => {
    expect(fieldsOf('"aaa","bbb","ccc"\r\nzzz,yyy,xxx')).toEqual([
      ['aaa', 'bbb', 'ccc'],
      ['zzz', 'yyy', 'xxx'],
    ]);
  });

  it('rule 6: quoted fields may hold line breaks, double quotes and commas', () => {
    const records = tokenizeCsv('"aaa","b\r\nbb","ccc"\r\nzzz,yyy,xxx');
    expect(records.map((record) => record.fields)).toEqual([
      ['aaa', 'b\r\nbb', 'ccc'],
      ['zzz', 'yyy', 'xxx'],
    ]);
    // The second record starts on the third physical line (our line numbers count line breaks).
    expect(records.map((record) => record.line)).toEqual([1, 3]);
    expect(fieldsOf('"a,b",c')).toEqual([['a,b', 'c']]);
  });

  it('rule 7: a double quote inside a quoted field is escaped by doubling it', () => {
    expect(fieldsOf('"aaa","b""bb","ccc"')).toEqual([['aaa', 'b"bb', 'ccc']]);
  });
});

describe('tokenizer beyond the RFC', () => {
  it('reads LF and lone CR line ends and skips blank lines, counting them', () => {
    const records = tokenizeCsv('a,b\n\nc,d\re,f\r\n');
    expect(records).toEqual([
      { fields: ['a', 'b'], line: 1 },
      { fields: ['c', 'd'], line: 3 },
      { fields: ['e', 'f'], line: 4 },
    ]);
  });

  it('marks text after a closing quote as malformed instead of guessing', () => {
    const [record] = tokenizeCsv('"ab"c,d\n');
    expect(record.malformed).toMatch(/after the closing quote/);
  });

  it('keeps a quote inside an unquoted field as a literal character', () => {
    expect(fieldsOf('5" pie,x\n')).toEqual([['5" pie', 'x']]);
  });

  it('refuses an unclosed quote at the end of the input, naming the line', () => {
    expect(() => tokenizeCsv('a,b\n1,"open\n2,3\n')).toThrow(/Unclosed quote.*line 2/);
  });

  it('trailing delimiter gives a last empty field', () => {
    expect(fieldsOf('a,b,\n')).toEqual([['a', 'b', '']]);
  });

  it('other delimiters', () => {
    expect(fieldsOf('a;"b;c"\n', ';')).toEqual([['a', 'b;c']]);
    expect(fieldsOf('a\tb\n', '\t')).toEqual([['a', 'b']]);
  });
});

/** RFC 4180 writer for the property tests: quote when needed, double the quotes. */
function writeCsv(rows: string[][], delimiter: string, lineEnd: string, quoteAll: boolean): string {
  return rows
    .map((row) =>
      row
        .map((cell) => (quoteAll || /["\r\n]/.test(cell) || cell.includes(delimiter) || cell === '' ? `"${cell.replace(/"/g, '""')}"` : cell))
        .join(delimiter),
    )
    .map((line) => line + lineEnd)
    .join('');
}

describe('tokenizer properties (fast-check)', () => {
  const cell = fc.string({ unit: fc.constantFrom('a', 'b', ' ', ',', ';', '"', '\n', '\r', 'é', '€', '\t', '|'), maxLength: 8 });
  const table = fc.array(fc.array(cell, { minLength: 1, maxLength: 5 }), { minLength: 1, maxLength: 8 });

  it('reads back what an RFC 4180 writer wrote, for any delimiter, line end and chunking', () => {
    fc.assert(
      fc.property(
        table,
        fc.constantFrom(',', ';', '\t', '|'),
        fc.constantFrom('\r\n', '\n'),
        fc.boolean(),
        fc.array(fc.nat(), { maxLength: 6 }),
        (rows, delimiter, lineEnd, quoteAll, cuts) => {
          const text = writeCsv(rows, delimiter, lineEnd, quoteAll);
          const tokenizer = new CsvTokenizer(delimiter);
          const read: CsvRecord[] = [];
          const collect = (record: CsvRecord) => read.push(record);
          const positions = [...new Set(cuts.map((cut) => cut % (text.length + 1)))].sort((a, b) => a - b);
          let previous = 0;
          for (const position of positions) {
            tokenizer.push(text.slice(previous, position), collect);
            previous = position;
          }
          tokenizer.push(text.slice(previous), collect);
          tokenizer.finish(collect);
          expect(read.map((record) => record.fields)).toEqual(rows);
        },
      ),
      { numRuns: 500 },
    );
  });

  it('never throws anything but an InputError on arbitrary text', () => {
    fc.assert(
      fc.property(fc.string({ unit: fc.constantFrom('a', ',', '"', '\n', '\r', ' '), maxLength: 40 }), (text) => {
        try {
          tokenizeCsv(text);
        } catch (error) {
          expect((error as Error).name).toBe('InputError');
        }
      }),
      { numRuns: 500 },
    );
  });
});

describe('delimiter sniffing', () => {
  it('finds each candidate', () => {
    expect(sniffDelimiter('a,b,c\n1,2,3\n')).toBe(',');
    expect(sniffDelimiter('a;b;c\n1;2,5;3\n4;5,5;6\n')).toBe(';');
    expect(sniffDelimiter('a\tb\n1\t2\n')).toBe('\t');
    expect(sniffDelimiter('a|b|c\n1|2|3\n')).toBe('|');
  });

  it('is not fooled by commas inside quotes or decimal commas', () => {
    expect(sniffDelimiter('name;amount\n"x, y";12,50\n"z";3,10\n')).toBe(';');
  });
});
