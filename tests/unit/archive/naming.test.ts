import { describe, expect, it } from 'vitest';
import { parsePrintDate } from '../../../src/lib/archive/edtf.ts';
import { NameBook, baseName, folderFor, namePatternSchema, safeSegment } from '../../../src/lib/archive/naming.ts';

// Reserved characters and device names: Microsoft's "Naming Files, Paths, and Namespaces" documentation.
describe('export file names', () => {
  it('names a print by date, caption and running number', () => {
    expect(baseName('{date} {caption} {seq}', { date: parsePrintDate('1981-07'), caption: 'Picnic at the lake', seq: 4 })).toBe('1981-07 Picnic at the lake 0004');
  });

  it('keeps letters of every script and refuses what Windows refuses', () => {
    expect(safeSegment('Großmutter & Zoë: "am See"?')).toBe('Großmutter & Zoë am See');
    expect(safeSegment('a/b\\c|d*e<f>g')).toBe('a b c d e f g');
    expect(safeSegment('CON')).toBe('_CON');
    expect(safeSegment('lpt1.txt')).toBe('_lpt1.txt');
    expect(safeSegment('trailing dots...  ')).toBe('trailing dots');
    expect(safeSegment('   ')).toBe('untitled');
  });

  it('composes accents the same way whatever the keyboard produced (NFC)', () => {
    expect(safeSegment('Zoe\u0308')).toBe('Zo\u00eb');
  });

  it('bounds the length without splitting a character', () => {
    const long = '😀'.repeat(200);
    const s = safeSegment(long);
    expect([...s].length).toBe(120);
    expect(s).toBe('😀'.repeat(120));
  });

  it('leaves no doubled separators when a field is empty', () => {
    expect(baseName('{date} {caption} {seq}', { date: null, caption: '', seq: 12 })).toBe('undated 0012');
  });

  it('puts undated prints in a folder of their own and dated ones by year or decade', () => {
    expect(folderFor(null)).toBe('undated');
    expect(folderFor(parsePrintDate('1981~'))).toBe('1981');
    expect(folderFor(parsePrintDate('198X'))).toBe('1980s');
  });

  it('never hands out one name twice, whatever the letter case', () => {
    const book = new NameBook();
    expect(book.claim('1981', 'Lake', '.jpg')).toBe('1981/Lake.jpg');
    expect(book.claim('1981', 'lake', '.jpg')).toBe('1981/lake (2).jpg');
    expect(book.claim('1981', 'Lake', '.jpg')).toBe('1981/Lake (3).jpg');
  });

  it('accepts only patterns with {seq} and known fields', () => {
    expect(namePatternSchema.safeParse('{date} {caption} {seq}').success).toBe(true);
    expect(namePatternSchema.safeParse('{date} {caption}').success).toBe(false);
    expect(namePatternSchema.safeParse('{seq} {camera}').success).toBe(false);
  });
});
