/**
 * A date in the text read from the back of a print. Labs printed the month and year of the
 * processing on the back ("AUG 81", "AUG 1981", "08 81"); families wrote a year ("1981", "'81",
 * "Summer 1981"). The first date found wins, a month with its year before a year alone. Pure, and
 * checked as EDTF by the archive's own date reader (src/lib/archive/edtf.ts).
 */
import { parsePrintDate } from '../archive/edtf.ts';

const MONTHS: Record<string, number> = {
  jan: 1, january: 1, feb: 2, february: 2, mar: 3, march: 3, apr: 4, april: 4, may: 5, jun: 6, june: 6,
  jul: 7, july: 7, aug: 8, august: 8, sep: 9, sept: 9, september: 9, oct: 10, october: 10, nov: 11, november: 11, dec: 12, december: 12,
};

/** What was found: the EDTF and the words of the text it was read from. */
export interface BackDate {
  edtf: string;
  /** The part of the text that gave it, as read. */
  from: string;
}

/** Years a print of the prints Drawerlight is for may carry. */
const FIRST_YEAR = 1900;
const LAST_YEAR = 2029;

/**
 * A two-digit year on a back is 1930-1999 (the prints this is for); "05" or "11" is too often a
 * day, a frame or an order number to be read as a year of this century.
 */
function fullYear(text: string): number | null {
  const n = Number(text);
  if (!Number.isInteger(n)) return null;
  if (text.length === 2 && n < 30) return null;
  const y = text.length === 2 ? 1900 + n : n;
  return y >= FIRST_YEAR && y <= LAST_YEAR ? y : null;
}

function checked(edtf: string, from: string): BackDate | null {
  try {
    return { edtf: parsePrintDate(edtf).edtf, from: from.trim() };
  } catch {
    return null;
  }
}

/** The date the back's text carries, or null when it carries none we can trust. */
export function dateOnBack(text: string): BackDate | null {
  // OCR reads a zero as O and a one as I or l now and then: mend them only between digits
  const t = text.replace(/(?<=\d)[Oo](?=\d)/g, '0').replace(/(?<=\d)[Il|](?=\d)/g, '1');

  // a month name and a year: "AUG 81", "Aug. 1981", "AUGUST '81"
  const named = /\b([A-Za-z]{3,9})\.?[\s,/-]*'?(\d{4}|\d{2})\b/g;
  for (let m = named.exec(t); m; m = named.exec(t)) {
    const month = MONTHS[m[1].toLowerCase()];
    const year = fullYear(m[2]);
    if (month && year) {
      const found = checked(`${year}-${String(month).padStart(2, '0')}`, m[0]);
      if (found) return found;
    }
  }

  // a month number and a year: "08/81", "8-1981", "11.1983"
  const numeric = /\b(0?[1-9]|1[0-2])[/.-](\d{4}|\d{2})\b/g;
  for (let m = numeric.exec(t); m; m = numeric.exec(t)) {
    const year = fullYear(m[2]);
    if (year) {
      const found = checked(`${year}-${m[1].padStart(2, '0')}`, m[0]);
      if (found) return found;
    }
  }

  // a year alone: "1981", "'81"
  const yearAlone = /(?:\b(19\d{2}|20[0-2]\d)\b|'(\d{2})\b)/g;
  for (let m = yearAlone.exec(t); m; m = yearAlone.exec(t)) {
    const year = fullYear(m[1] ?? m[2]);
    if (year) {
      const found = checked(String(year), m[0]);
      if (found) return found;
    }
  }
  return null;
}
