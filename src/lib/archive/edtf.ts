/**
 * Dates of prints in EDTF (Library of Congress Extended Date/Time Format, ISO 8601-2), parsed by
 * the `edtf` package and put into plain words: "about 1981", "the 1980s", "summer 1981",
 * "between 1980 and 1985". A date may be typed as EDTF or as words (dates-in-words.ts).
 * Pure code, shared by the server and the caption form in the browser.
 */
import edtf, { parse, type EdtfValue } from 'edtf';
import { edtfFromWords } from './dates-in-words.ts';

/**
 * The kind of a parsed value, from the grammar's parse tree. EDTF.js's own `type` getter returns
 * the class name, which a minifier renames in the browser bundle, so it is never read.
 */
type Kind = 'Date' | 'Year' | 'Decade' | 'Century' | 'Season' | 'Interval' | 'List' | 'Set' | string;

const MONTHS = ['January', 'February', 'March', 'April', 'May', 'June', 'July', 'August', 'September', 'October', 'November', 'December'];
/** ISO 8601-2 sub-year groupings 21–24 (seasons), 33–36 (quarters), 40–41 (halves). */
const GROUPINGS: Record<number, string> = {
  21: 'spring', 22: 'summer', 23: 'autumn', 24: 'winter',
  33: 'the first quarter of', 34: 'the second quarter of', 35: 'the third quarter of', 36: 'the fourth quarter of',
  40: 'the first half of', 41: 'the second half of',
};
// EDTF.js keeps qualifier and "X" digit flags as bitmasks over YYYYMMDD, one bit per digit.
const YEAR_DIGITS = 0b1111;
const MONTH_DIGITS = 0b110000;
const DAY_DIGITS = 0b11000000;

/** A print's date, understood. */
export interface PrintDate {
  /** The EDTF string as EDTF.js writes it back (normalised). */
  edtf: string;
  /** The date in words, e.g. "about 1981". */
  words: string;
  /** A single, unqualified calendar day: the only case EXIF DateTimeOriginal may carry. */
  exact: boolean;
  /** The earliest year the date allows, when known (folders and sorting). */
  year: number | null;
  /** The folder an export files the print under: "1981", "1980s", "1900s". */
  folder: string;
  /** XMP photoshop:DateCreated ("1981", "1981-07", "1981-07-15"), or null when the date is a span or a decade. */
  xmpDate: string | null;
  /**
   * Where a span or a decade starts, at its precision ("1978", "1980", "1981-06"); null for a single
   * date (see xmpDate) and for a span whose start is unknown. Photo programs know only one date
   * field, so a span is written there as its start, the full EDTF beside it.
   */
  spanStart: string | null;
  /** EXIF DateTimeOriginal ("1981:07:15 00:00:00"), only for exact dates. */
  exifDate: string | null;
}

/** Thrown for text that is not an EDTF date Drawerlight understands. */
export class DateNotUnderstood extends Error {
  constructor(readonly input: string, detail: string) {
    super(detail);
    this.name = 'DateNotUnderstood';
  }
}

const bits = (m: { value: number } | undefined, mask: number) => ((m?.value ?? 0) & mask) !== 0;
const pad = (n: number, w = 2) => String(n).padStart(w, '0');

/** An endpoint of an interval that is really there (EDTF.js gives null, undefined or the epoch for unknown ends). */
function knownEnd(v: EdtfValue | null | undefined): EdtfValue | null {
  if (!v || typeof v !== 'object') return null;
  if (v.min === null || v.min === undefined || !Number.isFinite(v.min)) return null;
  return v;
}

function qualified(v: EdtfValue, core: string): string {
  const approx = bits(v.approximate, ~0);
  const uncertain = bits(v.uncertain, ~0);
  if (approx && uncertain) return `perhaps about ${core}`;
  if (approx) return `about ${core}`;
  if (uncertain) return `perhaps ${core}`;
  return core;
}

/** The earliest year of a point (a decade "198" starts in 1980). */
function yearOf(v: EdtfValue, kind: Kind): number {
  const first = Number(v.values[0]);
  if (kind === 'Decade') return first * 10;
  if (kind === 'Century') return first * 100;
  return first;
}

/** Words for one point in time (a Date, Season, Decade or Century of EDTF.js). */
function pointWords(v: EdtfValue, kind: Kind): string {
  const year = yearOf(v, kind);
  switch (kind) {
    case 'Season': {
      const g = GROUPINGS[Number(v.values[1])] ?? `season ${v.values[1]} of`;
      return qualified(v, `${g} ${year}`);
    }
    case 'Decade':
    case 'Century':
      return qualified(v, `the ${year}s`);
    case 'Year':
      return qualified(v, String(year));
    default:
      break;
  }
  const u = v.unspecified;
  if (bits(u, YEAR_DIGITS)) {
    const mask = (u?.value ?? 0) & YEAR_DIGITS;
    if (mask === 0b1000) return qualified(v, `the ${year}s`);
    if (mask === 0b1100) return qualified(v, `the ${year}s`);
    return qualified(v, `some year ${String(year).replace(/0+$/, '')}…`);
  }
  const precision = v.precision ?? v.values.length;
  if (precision === 1) return qualified(v, String(year));
  if (bits(u, MONTH_DIGITS)) return qualified(v, `some time in ${year}`);
  const month = MONTHS[Number(v.values[1])];
  if (precision === 2) return qualified(v, `${month} ${year}`);
  if (bits(u, DAY_DIGITS)) return qualified(v, `some time in ${month} ${year}`);
  return qualified(v, `${Number(v.values[2])} ${month} ${year}`);
}

/** "the early 1980s", "late 1981": the spans that dates-in-words.ts writes for those words. */
function partWords(value: string): string | null {
  let m = /^(\d{3})0\/\1(3)~$|^(\d{3})3~\/\3(7)~$|^(\d{3})7~\/\5(9)$/.exec(value);
  if (m) {
    const decade = `${m[1] ?? m[3] ?? m[5]}0`;
    return `the ${{ '3': 'early', '7': 'mid', '9': 'late' }[(m[2] ?? m[4] ?? m[6]) as '3' | '7' | '9']} ${decade}s`;
  }
  m = /^(\d{4})-(01|05|09)\/\1-(04|08|12)$/.exec(value);
  if (m && Number(m[3]) - Number(m[2]) === 3) return `${{ '01': 'early', '05': 'mid', '09': 'late' }[m[2] as '01' | '05' | '09']} ${m[1]}`;
  return null;
}

function folderOf(v: EdtfValue, kind: Kind): string {
  const year = yearOf(v, kind);
  if (kind === 'Decade' || kind === 'Century') return `${year}s`;
  const mask = (v.unspecified?.value ?? 0) & YEAR_DIGITS;
  if (mask === 0b1000 || mask === 0b1100) return `${year}s`;
  return String(year);
}

function xmpDateOf(v: EdtfValue, kind: Kind): string | null {
  if (kind === 'Decade' || kind === 'Century') return null;
  if (bits(v.unspecified, YEAR_DIGITS)) return null;
  const year = pad(yearOf(v, kind), 4);
  if (kind === 'Season' || kind === 'Year') return year;
  const precision = v.precision ?? v.values.length;
  if (precision === 1 || bits(v.unspecified, MONTH_DIGITS)) return year;
  const month = pad(Number(v.values[1]) + 1);
  if (precision === 2 || bits(v.unspecified, DAY_DIGITS)) return `${year}-${month}`;
  return `${year}-${month}-${pad(Number(v.values[2]))}`;
}

/** The first year, month or day a point allows: its own date, or a decade's first year. */
function startOf(v: EdtfValue, kind: Kind): string {
  return xmpDateOf(v, kind) ?? pad(yearOf(v, kind), 4);
}

function isExact(v: EdtfValue, kind: Kind): boolean {
  return kind === 'Date' && (v.precision ?? 0) === 3 && !bits(v.approximate, ~0) && !bits(v.uncertain, ~0) && !bits(v.unspecified, ~0);
}

/** EDTF's parse tree and value of `text`, or null when it is not EDTF at all. */
function readEdtf(text: string): { tree: { type: Kind; values: unknown[] }; v: EdtfValue } | null {
  try {
    return { tree: parse(text) as { type: Kind; values: unknown[] }, v: edtf(text) };
  } catch {
    return null;
  }
}

/**
 * Parses a print's date, typed as EDTF ("1981", "1981-07", "1981~", "198X", "1981-22",
 * "1980/1985", "/1985", "1985/..") or as words ("summer 1981", "early 80s", "about 1975",
 * "between 1978 and 1982": see DATE_PHRASES). What words give is checked as EDTF like the rest.
 * @throws {DateNotUnderstood}
 */
export function parsePrintDate(input: string): PrintDate {
  const text = input.trim();
  if (!text) throw new DateNotUnderstood(input, 'Write a date, or leave the field empty.');
  let read = readEdtf(text);
  // two digits alone are a century in EDTF ("81" the 8100s), never what a family means: read as words
  if (!read || read.tree.type === 'Century') {
    const words = edtfFromWords(text);
    if (words && 'error' in words) throw new DateNotUnderstood(input, words.error);
    if (words) {
      read = readEdtf(words.edtf);
      if (!read && /\//.test(words.edtf)) throw new DateNotUnderstood(input, `"${text}" ends before it starts: put the earlier date first.`);
    } else if (read) {
      throw new DateNotUnderstood(input, `"${text}" reads as a century in EDTF; write the full year (1981) or 19XX for the 1900s.`);
    }
    if (!read) {
      throw new DateNotUnderstood(
        input,
        `"${text}" is not a date we can read: try 1981, July 1981, summer 1981, about 1975, early 80s, between 1978 and 1982, or EDTF such as 1981~ or 198X.`,
      );
    }
  }
  const { tree, v } = read;
  const kind = tree.type;
  if (kind === 'List' || kind === 'Set') {
    throw new DateNotUnderstood(input, 'Lists and sets of dates are not supported: give one date or a span such as 1980/1985.');
  }
  const latest = new Date().getUTCFullYear() + 1;
  const firstYear = kind === 'Interval' ? Number(v.lower?.values?.[0] ?? v.upper?.values?.[0]) : yearOf(v, kind);
  if (Number.isFinite(firstYear) && firstYear > latest) throw new DateNotUnderstood(input, `${text} is in the future; a print's date is in the past.`);
  if (kind === 'Interval') {
    const lower = knownEnd(v.lower);
    const upper = knownEnd(v.upper);
    const ends = tree.values as ({ type: Kind } | null)[];
    const lk: Kind = ends[0]?.type ?? 'Date';
    const uk: Kind = ends[1]?.type ?? 'Date';
    if (lk === 'Century' || uk === 'Century') throw new DateNotUnderstood(input, `"${text}" has a century at one end; write full years, e.g. 1980/1985.`);
    const openStart = v.edtf.startsWith('..');
    const openEnd = v.edtf.endsWith('..');
    if (!lower && !upper) throw new DateNotUnderstood(input, 'A span needs at least one known end, e.g. 1980/1985 or /1985.');
    let words: string;
    if (lower && upper) {
      const a = pointWords(lower, lk);
      const b = pointWords(upper, uk);
      words = partWords(v.edtf) ?? (a === b ? a : `between ${a} and ${b}`);
    } else if (upper) words = openStart ? `${pointWords(upper, uk)} or earlier` : `by ${pointWords(upper, uk)} (start unknown)`;
    else words = openEnd ? `${pointWords(lower!, lk)} or later` : `from ${pointWords(lower!, lk)} (end unknown)`;
    const first = lower ?? upper!;
    const fk = lower ? lk : uk;
    const sameYear = lower && upper && yearOf(lower, lk) === yearOf(upper, uk) && !bits(lower.unspecified, YEAR_DIGITS);
    return {
      edtf: v.edtf,
      words,
      exact: false,
      year: yearOf(first, fk),
      folder: folderOf(first, fk),
      xmpDate: sameYear ? pad(yearOf(lower!, lk), 4) : null,
      spanStart: lower && !openStart ? startOf(lower, lk) : null,
      exifDate: null,
    };
  }
  const exact = isExact(v, kind);
  return {
    edtf: v.edtf,
    words: pointWords(v, kind),
    exact,
    year: yearOf(v, kind),
    folder: folderOf(v, kind),
    xmpDate: xmpDateOf(v, kind),
    spanStart: xmpDateOf(v, kind) ? null : startOf(v, kind),
    exifDate: exact ? `${pad(yearOf(v, kind), 4)}:${pad(Number(v.values[1]) + 1)}:${pad(Number(v.values[2]))} 00:00:00` : null,
  };
}

/** The date in words, or the reason it is not understood (for the form as one types). */
export function describePrintDate(input: string): { ok: true; date: PrintDate } | { ok: false; message: string } {
  try {
    return { ok: true, date: parsePrintDate(input) };
  } catch (err) {
    return { ok: false, message: err instanceof DateNotUnderstood ? err.message : String(err) };
  }
}

/** Words for a stored EDTF value; empty when there is none, the raw text when it no longer parses. */
export function dateInWords(value: string | null | undefined): string {
  if (!value) return '';
  const r = describePrintDate(value);
  return r.ok ? r.date.words : value;
}

/**
 * A stored EDTF value as the date field shows it: in words when the words read back to the very
 * same EDTF (so saving the form again changes nothing), otherwise the EDTF itself.
 */
export function dateForField(value: string | null | undefined): string {
  if (!value) return '';
  const words = dateInWords(value);
  const back = describePrintDate(words);
  return back.ok && back.date.edtf === value ? words : value;
}
