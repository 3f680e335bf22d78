import { describe, expect, it } from 'vitest';
import { dateInWords, describePrintDate, parsePrintDate } from '../../../src/lib/archive/edtf.ts';

// Forms and meanings from the Library of Congress EDTF specification (ISO 8601-2:2019 levels 0 and 1):
// "~" approximate, "?" uncertain, "%" both, "X" unspecified digit, "/" interval, ".." open end, 21–24 seasons.
describe('EDTF dates of prints', () => {
  it.each([
    ['1981', '1981'],
    ['1981~', 'about 1981'],
    ['1981?', 'perhaps 1981'],
    ['1981%', 'perhaps about 1981'],
    ['198X', 'the 1980s'],
    ['19XX', 'the 1900s'],
    ['1981-07', 'July 1981'],
    ['1981-07-15', '15 July 1981'],
    ['1981-07~', 'about July 1981'],
    ['1981-XX', 'some time in 1981'],
    ['1981-22', 'summer 1981'],
    ['1981-24', 'winter 1981'],
    ['1980/1985', 'between 1980 and 1985'],
    ['1981~/1985', 'between about 1981 and 1985'],
    ['/1985', 'by 1985 (start unknown)'],
    ['1985/', 'from 1985 (end unknown)'],
    ['../1985', '1985 or earlier'],
    ['1985/..', '1985 or later'],
  ])('reads %s as "%s"', (input, words) => {
    expect(parsePrintDate(input).words).toBe(words);
  });

  it('treats an unknown end as open rather than as 1970 (the edtf package reports the epoch there)', () => {
    const d = parsePrintDate('/1985');
    expect(d.year).toBe(1985);
    expect(d.words).not.toMatch(/1970/);
    expect(parsePrintDate('1985/').year).toBe(1985);
  });

  it('allows EXIF DateTimeOriginal only for a single unqualified day', () => {
    expect(parsePrintDate('1981-07-15')).toMatchObject({ exact: true, exifDate: '1981:07:15 00:00:00' });
    for (const s of ['1981', '1981-07', '1981-07-15~', '1981-07-15?', '1981-07-XX', '1980/1985', '1981-22']) {
      expect(parsePrintDate(s), s).toMatchObject({ exact: false, exifDate: null });
    }
  });

  it('gives XMP photoshop:DateCreated as a partial date, and none for decades and spans', () => {
    expect(parsePrintDate('1981').xmpDate).toBe('1981');
    expect(parsePrintDate('1981~').xmpDate).toBe('1981');
    expect(parsePrintDate('1981-07').xmpDate).toBe('1981-07');
    expect(parsePrintDate('1981-22').xmpDate).toBe('1981');
    expect(parsePrintDate('1981-07-15').xmpDate).toBe('1981-07-15');
    expect(parsePrintDate('198X').xmpDate).toBeNull();
    expect(parsePrintDate('1980/1985').xmpDate).toBeNull();
  });

  it("gives a span's or a decade's start at its own precision, and none for a single date or an unknown start", () => {
    expect(parsePrintDate('1978/1982').spanStart).toBe('1978');
    expect(parsePrintDate('1981-06/1982-02').spanStart).toBe('1981-06');
    expect(parsePrintDate('198X').spanStart).toBe('1980');
    expect(parsePrintDate('/1985').spanStart).toBeNull();
    expect(parsePrintDate('../1985').spanStart).toBeNull();
    expect(parsePrintDate('1981-07').spanStart).toBeNull();
  });

  it('files a print under its earliest year, or its decade when the year is not known', () => {
    expect(parsePrintDate('1981-07-15').folder).toBe('1981');
    expect(parsePrintDate('198X').folder).toBe('1980s');
    expect(parsePrintDate('1980/1985').folder).toBe('1980');
  });

  it('explains what it cannot read instead of guessing', () => {
    // "05" could be 1905 or 2005; "1981-13" is neither a month nor a span of years.
    for (const bad of ['nonsense', '1981-13', 'summer 05', '', '[1981,1982]', '05', '2999', 'between 1985 and 1980', '31 February 1981']) {
      const r = describePrintDate(bad);
      expect(r.ok, bad).toBe(false);
      if (!r.ok) expect(r.message.length).toBeGreaterThan(10);
    }
  });

  it('shows a stored value in words and an empty one as nothing', () => {
    expect(dateInWords('1981~')).toBe('about 1981');
    expect(dateInWords(null)).toBe('');
  });
});
