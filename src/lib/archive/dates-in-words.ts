/**
 * Dates as families say them ("summer 1981", "early 80s", "about 1975", "Christmas 1983") turned
 * into EDTF (Library of Congress Extended Date/Time Format, ISO 8601-2). Pure code, shared by the
 * server and the caption form; edtf.ts validates what comes out with the `edtf` package, so this
 * module only has to read English, never to judge EDTF.
 *
 * It also reads back every phrase edtf.ts writes ("between about 1981 and 1985", "perhaps July
 * 1981"), so a stored date can be shown in words in the form and saved again unchanged.
 */

/** The outcome of reading a phrase: its EDTF, a reason it cannot be one, or not a phrase we know. */
export type WordsReading = { edtf: string } | { error: string } | null;

const MONTHS: Record<string, number> = {
  january: 1, jan: 1, february: 2, feb: 2, march: 3, mar: 3, april: 4, apr: 4, may: 5, june: 6, jun: 6,
  july: 7, jul: 7, august: 8, aug: 8, september: 9, sep: 9, sept: 9, october: 10, oct: 10, november: 11, nov: 11, december: 12, dec: 12,
};
/** ISO 8601-2 sub-year groupings: seasons 21–24 (autumn and fall alike), quarters 33–36, halves 40–41. */
const GROUPINGS: Record<string, number> = {
  spring: 21, summer: 22, autumn: 23, fall: 23, winter: 24,
  'the first quarter of': 33, 'the second quarter of': 34, 'the third quarter of': 35, 'the fourth quarter of': 36,
  'first quarter of': 33, 'second quarter of': 34, 'third quarter of': 35, 'fourth quarter of': 36,
  'the first half of': 40, 'the second half of': 41, 'first half of': 40, 'second half of': 41,
};
const DECADE_NAMES: Record<string, number> = {
  twenties: 2, thirties: 3, forties: 4, fifties: 5, sixties: 6, seventies: 7, eighties: 8, nineties: 9,
};
const ABOUT = ['perhaps about', 'maybe about', 'possibly about', 'about', 'around', 'approximately', 'approx.', 'approx', 'roughly', 'circa', 'ca.', 'ca', 'c.', 'c'];
const PERHAPS = ['perhaps', 'maybe', 'possibly', 'probably'];

const pad = (n: number, w = 2) => String(n).padStart(w, '0');

/** A point in time as EDTF, before any qualifier; `qualifiable` is false where EDTF allows none (seasons). */
interface Point {
  edtf: string;
  qualifiable: boolean;
}

/**
 * A four-digit year, or two digits read as 19xx. Two digits from 00 to the current year's are
 * refused: "05" could be 1905 or 2005, and guessing would file a print in the wrong century.
 */
function yearOf(text: string): number | { error: string } | null {
  const t = text.replace(/^'/, '');
  if (/^\d{4}$/.test(t)) return Number(t);
  if (/^\d{2}$/.test(t)) {
    const n = Number(t);
    if (n <= new Date().getUTCFullYear() % 100) return { error: `"${text}" could be 19${t} or 20${t}: write the full year.` };
    return 1900 + n;
  }
  return null;
}

/** A decade: "1980s", "the 80s", "'80s", "eighties"; its first year, or why it cannot be read. */
function decadeOf(text: string): number | { error: string } | null {
  const t = text.replace(/^the /, '');
  const named = DECADE_NAMES[t];
  if (named !== undefined) return 1900 + named * 10;
  const m = /^'?(\d{2}|\d{3}0)'?s$/.exec(t);
  if (!m) return null;
  if (m[1].length === 4) return Number(m[1]);
  if (!m[1].endsWith('0')) return null;
  const y = yearOf(m[1]);
  if (typeof y === 'object' && y !== null) return { error: `"${text}" could be the 19${m[1]}s or the 20${m[1]}s: write 19${m[1]}s or 20${m[1]}s.` };
  return y;
}

/** One point in time without qualifiers: a year, month, day, season, decade, holiday. */
function pointOf(text: string): Point | { error: string } | null {
  const t = text.trim();
  if (/^\d{4}(-\d{2}){0,2}$/.test(t) || /^\d{3}x$/.test(t) || /^\d{2}xx$/.test(t) || /^\d{4}-(\d{2}|xx)(-xx)?$/.test(t)) {
    const e = t.toUpperCase();
    // "1978-82" is a span of years, not a month 82: left to the span rules
    const month = Number(e.slice(5, 7));
    if (month > 12 && !/^(2[1-4]|3[3-6]|4[01])$/.test(e.slice(5, 7))) return null;
    return { edtf: e, qualifiable: !/^\d{4}-(2[1-4]|3[3-6]|4[01])$/.test(e) };
  }
  let m = /^(?:some ?time in |sometime in |in )?(.+)$/.exec(t)!;
  const some = m[1] !== t && /^some ?time in /.test(t);
  const body = m[1];
  const y = yearOf(body);
  if (y !== null) {
    if (typeof y === 'object') return y;
    return { edtf: some ? `${y}-XX` : String(y), qualifiable: true };
  }
  // "July 1981", "July of 1981", "July, 1981"
  m = /^([a-z.]+),? (?:of )?('?\d{2}|\d{4})$/.exec(body)!;
  if (m && MONTHS[m[1].replace(/\.$/, '')]) {
    const year = yearOf(m[2]);
    if (typeof year !== 'number') return year;
    return { edtf: `${year}-${pad(MONTHS[m[1].replace(/\.$/, '')])}${some ? '-XX' : ''}`, qualifiable: true };
  }
  // "15 July 1981", "15th July 1981", "July 15, 1981", "July 15th 1981"
  m = /^(\d{1,2})(?:st|nd|rd|th)? (?:of )?([a-z.]+),? (\d{4})$/.exec(body) ?? null!;
  let day: number | undefined;
  let month: number | undefined;
  let year: number | undefined;
  if (m && MONTHS[m[2].replace(/\.$/, '')]) [day, month, year] = [Number(m[1]), MONTHS[m[2].replace(/\.$/, '')], Number(m[3])];
  m = /^([a-z.]+) (\d{1,2})(?:st|nd|rd|th)?,? (\d{4})$/.exec(body) ?? null!;
  if (m && MONTHS[m[1].replace(/\.$/, '')]) [day, month, year] = [Number(m[2]), MONTHS[m[1].replace(/\.$/, '')], Number(m[3])];
  if (day !== undefined && month !== undefined && year !== undefined) {
    const last = new Date(Date.UTC(year, month, 0)).getUTCDate();
    if (day < 1 || day > last) return { error: `There is no such day as ${text}.` };
    return { edtf: `${year}-${pad(month)}-${pad(day)}`, qualifiable: true };
  }
  // seasons, quarters and halves: "summer 1981", "summer of '81", "the first half of 1981"
  for (const [name, code] of Object.entries(GROUPINGS)) {
    const g = new RegExp(`^${name},? (?:of )?('?\\d{2}|\\d{4})$`).exec(body);
    if (g) {
      const year = yearOf(g[1]);
      if (typeof year !== 'number') return year;
      return { edtf: `${year}-${code}`, qualifiable: false };
    }
  }
  // Christmas: the photographs of a Christmas are taken around it, in late December (or early January).
  m = /^(?:christmas|xmas),? (?:of )?('?\d{2}|\d{4})$/.exec(body)!;
  if (m) {
    const year = yearOf(m[1]);
    if (typeof year !== 'number') return year;
    return { edtf: `${year}-12~`, qualifiable: false };
  }
  const decade = decadeOf(body);
  if (decade !== null) {
    if (typeof decade === 'object') return decade;
    return { edtf: `${String(decade).slice(0, 3)}X`, qualifiable: true };
  }
  return null;
}

/** A point with "about"/"perhaps" before it or "?"/"~"/"or so" after it. */
function qualifiedOf(text: string): Point | { error: string } | null {
  let t = text.trim();
  let approx = false;
  let uncertain = false;
  for (const p of ABOUT) {
    const m = new RegExp(`^${p.replace('.', '\\.')}(?: |(?=\\d))`).exec(t);
    if (m) {
      approx = true;
      if (p.includes(' ')) uncertain = true;
      t = t.slice(m[0].length);
      break;
    }
  }
  if (!approx) {
    for (const p of PERHAPS) {
      if (t.startsWith(`${p} `)) {
        uncertain = true;
        t = t.slice(p.length + 1);
        if (t.startsWith('about ')) {
          approx = true;
          t = t.slice(6);
        }
        break;
      }
    }
  }
  const suffix = /^(.*?)\s*(\?|~|%| or so|-?ish)$/.exec(t);
  if (suffix) {
    t = suffix[1];
    if (suffix[2] === '?') uncertain = true;
    else if (suffix[2] === '%') [approx, uncertain] = [true, true];
    else approx = true;
  }
  const point = pointOf(t);
  if (!point || 'error' in point) return point;
  if (!approx && !uncertain) return point;
  if (!point.qualifiable) return { error: `EDTF cannot mark "${t}" as about or perhaps: leave those words out.` };
  const mark = approx && uncertain ? '%' : approx ? '~' : '?';
  return { edtf: `${point.edtf.replace(/[~?%]$/, '')}${mark}`, qualifiable: false };
}

/** "early", "mid" or "late" in a decade ("early 80s") or a year ("late 1981"): a span. */
function partOf(text: string): WordsReading {
  const m = /^(?:the )?(early|mid|late)[- ](?:the )?(.+)$/.exec(text);
  if (!m) return null;
  const decade = decadeOf(m[2]);
  if (decade !== null) {
    if (typeof decade === 'object') return decade;
    // The three parts overlap at their approximate ends, as memory does.
    if (m[1] === 'early') return { edtf: `${decade}/${decade + 3}~` };
    if (m[1] === 'mid') return { edtf: `${decade + 3}~/${decade + 7}~` };
    return { edtf: `${decade + 7}~/${decade + 9}` };
  }
  const year = yearOf(m[2]);
  if (year === null) return null;
  if (typeof year === 'object') return year;
  if (m[1] === 'early') return { edtf: `${year}-01/${year}-04` };
  if (m[1] === 'mid') return { edtf: `${year}-05/${year}-08` };
  return { edtf: `${year}-09/${year}-12` };
}

/** Ends of a span: "between A and B", "from A to B", "A to B", "A-B". */
const SPANS: RegExp[] = [
  /^between (.+?) and (.+)$/,
  /^from (.+?) (?:to|until|till) (.+)$/,
  /^(.+?) (?:to|until|till|or) (.+)$/,
  /^(.+?)\s*(?:-|–|—)\s*(.+)$/,
];

function endOf(text: string): string | { error: string } | null {
  const p = qualifiedOf(text);
  if (p === null || 'error' in p) return p;
  return p.edtf;
}

/**
 * Reads a date phrase as EDTF. Gives `null` when the text is no phrase this module knows (the
 * caller then reports it as not understood), `{ error }` when it is one but cannot be a date.
 */
export function edtfFromWords(input: string): WordsReading {
  const t = input
    .normalize('NFKC')
    .toLowerCase()
    .replace(/[’‘]/g, "'")
    .replace(/\s+/g, ' ')
    .replace(/[.,]$/, '')
    .trim();
  if (!t) return null;
  const part = partOf(t);
  if (part) return part;
  const single = qualifiedOf(t);
  if (single) return 'error' in single ? single : { edtf: single.edtf };
  let m = /^(?:(?:sometime |some time )?before) (.+)$/.exec(t);
  if (m) {
    const y = yearOf(m[1]);
    if (typeof y === 'number') return { edtf: `../${y - 1}` };
  }
  m = /^(?:after) (.+)$/.exec(t);
  if (m) {
    const y = yearOf(m[1]);
    if (typeof y === 'number') return { edtf: `${y + 1}/..` };
  }
  m = /^(.+) or (earlier|later)$/.exec(t);
  if (m) {
    const end = endOf(m[1]);
    if (end === null || typeof end === 'object') return end;
    return { edtf: m[2] === 'earlier' ? `../${end}` : `${end}/..` };
  }
  m = /^by (.+?)(?: \(start unknown\))?$/.exec(t);
  if (m) {
    const end = endOf(m[1]);
    if (end === null || typeof end === 'object') return end;
    return { edtf: `/${end}` };
  }
  m = /^from (.+?) \(end unknown\)$/.exec(t);
  if (m) {
    const end = endOf(m[1]);
    if (end === null || typeof end === 'object') return end;
    return { edtf: `${end}/` };
  }
  for (const span of SPANS) {
    m = span.exec(t);
    if (!m) continue;
    const a = endOf(m[1]);
    // "1978-82" and "1978 to 82": the end's century is the start's
    const short = /^\d{4}$/.test(m[1]) && /^'?\d{2}$/.exec(m[2]);
    const b = short ? `${m[1].slice(0, 2)}${m[2].replace("'", '')}` : endOf(m[2]);
    if (short && Number(b) <= Number(m[1])) return null;
    if (a === null || b === null) continue;
    if (typeof a === 'object') return a;
    if (typeof b === 'object') return b;
    return { edtf: `${a}/${b}` };
  }
  return null;
}

/**
 * The phrases the Guide lists, each with the EDTF it is stored as (the unit tests hold the same
 * table, written out, and check every row).
 */
export const DATE_PHRASES: readonly { phrases: readonly string[]; edtf: string }[] = [
  { phrases: ['1981', 'in 1981'], edtf: '1981' },
  { phrases: ['July 1981', 'Jul 1981'], edtf: '1981-07' },
  { phrases: ['15 July 1981', 'July 15, 1981'], edtf: '1981-07-15' },
  { phrases: ['summer 1981', "summer '81"], edtf: '1981-22' },
  { phrases: ['spring 1985'], edtf: '1985-21' },
  { phrases: ['autumn 1979', 'fall 1979'], edtf: '1979-23' },
  { phrases: ['winter 1962'], edtf: '1962-24' },
  { phrases: ['Christmas 1983'], edtf: '1983-12~' },
  { phrases: ['about 1975', 'around 1975', 'circa 1975', 'c. 1975', '1975ish'], edtf: '1975~' },
  { phrases: ['1979?', 'perhaps 1979', 'maybe 1979'], edtf: '1979?' },
  { phrases: ['perhaps about 1979'], edtf: '1979%' },
  { phrases: ['about July 1981'], edtf: '1981-07~' },
  { phrases: ['1980s', 'the 80s', 'the eighties'], edtf: '198X' },
  { phrases: ['early 80s', 'the early 1980s'], edtf: '1980/1983~' },
  { phrases: ['mid 70s', 'mid-1970s'], edtf: '1973~/1977~' },
  { phrases: ['late 1960s', 'late sixties'], edtf: '1967~/1969' },
  { phrases: ['early 1981'], edtf: '1981-01/1981-04' },
  { phrases: ['mid 1981'], edtf: '1981-05/1981-08' },
  { phrases: ['late 1981'], edtf: '1981-09/1981-12' },
  { phrases: ['between 1978 and 1982', '1978-1982', '1978-82', '1978 to 1982'], edtf: '1978/1982' },
  { phrases: ['before 1985'], edtf: '../1984' },
  { phrases: ['after 1985'], edtf: '1986/..' },
  { phrases: ['some time in 1981'], edtf: '1981-XX' },
];
