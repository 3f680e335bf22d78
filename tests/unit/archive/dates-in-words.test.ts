import { parse } from 'edtf';
import { describe, expect, it } from 'vitest';
import { DATE_PHRASES } from '../../../src/lib/archive/dates-in-words.ts';
import { dateForField, dateInWords, describePrintDate, parsePrintDate } from '../../../src/lib/archive/edtf.ts';

// The phrases a family writes on the back of a print or says aloud, each with the EDTF it is stored as.
// EDTF forms from the Library of Congress EDTF specification (ISO 8601-2:2019 levels 0 and 1): 21–24 seasons
// (23 autumn), "~" approximate, "?" uncertain, "%" both, "X" unspecified digit, "/" interval, ".." open end.
// Where a phrase has no single EDTF form (Christmas, early/mid/late), the choice is ours, invented for the product.
const TABLE: [phrase: string, edtf: string, words: string][] = [
  ['1981', '1981', '1981'],
  ['in 1981', '1981', '1981'],
  ['81', '1981', '1981'],
  ['July 1981', '1981-07', 'July 1981'],
  ['Jul 1981', '1981-07', 'July 1981'],
  ['15 July 1981', '1981-07-15', '15 July 1981'],
  ['15th of July 1981', '1981-07-15', '15 July 1981'],
  ['July 15, 1981', '1981-07-15', '15 July 1981'],
  ['summer 1981', '1981-22', 'summer 1981'],
  ["summer '81", '1981-22', 'summer 1981'],
  ['Summer of 1981', '1981-22', 'summer 1981'],
  ['spring 1985', '1985-21', 'spring 1985'],
  ['autumn 1979', '1979-23', 'autumn 1979'],
  ['fall 1979', '1979-23', 'autumn 1979'],
  ['winter 1962', '1962-24', 'winter 1962'],
  ['Christmas 1983', '1983-12~', 'about December 1983'],
  ['Xmas 83', '1983-12~', 'about December 1983'],
  ['about 1975', '1975~', 'about 1975'],
  ['around 1975', '1975~', 'about 1975'],
  ['circa 1975', '1975~', 'about 1975'],
  ['c. 1975', '1975~', 'about 1975'],
  ['c1975', '1975~', 'about 1975'],
  ['1975ish', '1975~', 'about 1975'],
  ['1975 or so', '1975~', 'about 1975'],
  ['1979?', '1979?', 'perhaps 1979'],
  ['perhaps 1979', '1979?', 'perhaps 1979'],
  ['maybe 1979', '1979?', 'perhaps 1979'],
  ['perhaps about 1979', '1979%', 'perhaps about 1979'],
  ['about July 1981', '1981-07~', 'about July 1981'],
  ['1980s', '198X', 'the 1980s'],
  ['the 80s', '198X', 'the 1980s'],
  ["the '80s", '198X', 'the 1980s'],
  ['the eighties', '198X', 'the 1980s'],
  ['early 80s', '1980/1983~', 'the early 1980s'],
  ['the early 1980s', '1980/1983~', 'the early 1980s'],
  ['mid 70s', '1973~/1977~', 'the mid 1970s'],
  ['mid-1970s', '1973~/1977~', 'the mid 1970s'],
  ['late 1960s', '1967~/1969', 'the late 1960s'],
  ['late sixties', '1967~/1969', 'the late 1960s'],
  ['early 1981', '1981-01/1981-04', 'early 1981'],
  ['mid 1981', '1981-05/1981-08', 'mid 1981'],
  ['late 1981', '1981-09/1981-12', 'late 1981'],
  ['between 1978 and 1982', '1978/1982', 'between 1978 and 1982'],
  ['1978-1982', '1978/1982', 'between 1978 and 1982'],
  ['1978–1982', '1978/1982', 'between 1978 and 1982'],
  ['1978-82', '1978/1982', 'between 1978 and 1982'],
  ['1978 to 1982', '1978/1982', 'between 1978 and 1982'],
  ['from 1978 to 1982', '1978/1982', 'between 1978 and 1982'],
  ['between about 1978 and 1982', '1978~/1982', 'between about 1978 and 1982'],
  ['July 1981 to September 1981', '1981-07/1981-09', 'between July 1981 and September 1981'],
  ['before 1985', '../1984', '1984 or earlier'],
  ['after 1985', '1986/..', '1986 or later'],
  ['some time in 1981', '1981-XX', 'some time in 1981'],
  // EDTF itself is still understood as it is typed
  ['1981-22', '1981-22', 'summer 1981'],
  ['198X', '198X', 'the 1980s'],
  ['1975~', '1975~', 'about 1975'],
  ['1978/1982', '1978/1982', 'between 1978 and 1982'],
];

describe('dates as people say them', () => {
  it.each(TABLE)('stores "%s" as %s and shows it as "%s"', (phrase, edtf, words) => {
    const d = parsePrintDate(phrase);
    expect(d.edtf).toBe(edtf);
    expect(d.words).toBe(words);
    // the edtf package (EDTF.js) accepts what we store
    expect(() => parse(d.edtf)).not.toThrow();
  });

  it('reads back the words it shows, so a stored date shown in words saves unchanged', () => {
    for (const [, edtf] of TABLE) {
      const words = dateInWords(edtf);
      expect(parsePrintDate(words).edtf, words).toBe(edtf);
      expect(dateForField(edtf)).toBe(words);
    }
  });

  it('shows a stored date in EDTF in the form when its words would read back differently', () => {
    // "the 1900s" reads back as the decade 190X, not the century 19XX
    expect(dateForField('19XX')).toBe('19XX');
    expect(dateForField(null)).toBe('');
  });

  it('lists in the Guide only phrases that store as the EDTF beside them', () => {
    const inTable = new Map(TABLE.map(([p, e]) => [p, e]));
    for (const row of DATE_PHRASES) {
      for (const phrase of row.phrases) {
        expect(parsePrintDate(phrase).edtf, phrase).toBe(row.edtf);
        expect(inTable.get(phrase), `${phrase} is in the test table`).toBe(row.edtf);
      }
    }
  });

  it.each([
    ['summer 05', /1905 or 2005/],
    ['the 20s', /1920s or the 2020s/],
    ['between 1985 and 1980', /ends before it starts/],
    ['about summer 1981', /leave those words out/],
    ['31 February 1981', /no such day/],
    ['next tuesday', /not a date we can read/],
    ['summer 2999', /future/],
  ])('explains why "%s" cannot be stored', (phrase, message) => {
    const r = describePrintDate(phrase);
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.message).toMatch(message);
  });
});
