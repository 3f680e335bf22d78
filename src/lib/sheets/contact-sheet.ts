/**
 * Contact sheets: numbered prints on paper for a relative who is not online to write on (who,
 * where, when), and the answers typed back in. The shapes the routes, the pages and the sheet
 * island share, and the page layout the PDF follows. Pure: safe in the browser.
 */
import { z } from 'zod';
import { dateField, LIMITS, peopleField, personName } from '../archive/metadata.ts';
import { plainText } from '../archive/plain-text.ts';

/** Which prints of a batch a sheet holds. */
export const SHEET_SCOPES = [
  { key: 'all', words: 'Every print of the batch' },
  { key: 'people', words: 'Prints whose people are unknown' },
  { key: 'date', words: 'Prints with no date yet' },
  { key: 'chosen', words: 'The prints I chose' },
] as const;
export type SheetScope = (typeof SHEET_SCOPES)[number]['key'];

/** Paper the sheet is laid out for, in PDF points (1/72 inch). */
export const SHEET_PAPERS = {
  a4: { words: 'A4', width: 595.28, height: 841.89 },
  letter: { words: 'US Letter', width: 612, height: 792 },
} as const;
export type SheetPaper = keyof typeof SHEET_PAPERS;

/** Prints a page of the sheet holds: 3 across, 4 down. */
export const SHEET_COLUMNS = 3;
export const SHEET_ROWS = 4;
export const PRINTS_PER_PAGE = SHEET_COLUMNS * SHEET_ROWS;
/** The most prints one sheet holds (a long batch is printed as several sheets). */
export const MAX_SHEET_PRINTS = 1000;

const scopeKeys = SHEET_SCOPES.map((s) => s.key) as [SheetScope, ...SheetScope[]];

/** What the "make a contact sheet" form sends. */
export const sheetRequestSchema = z
  .object({
    scope: z.enum(scopeKeys, { errorMap: () => ({ message: `Choose one of ${scopeKeys.join(', ')}.` }) }),
    paper: z.enum(['a4', 'letter'], { errorMap: () => ({ message: 'Choose a4 or letter.' }) }).default('a4'),
    itemIds: z.array(z.string().uuid('Not an item id.')).max(MAX_SHEET_PRINTS, `At most ${MAX_SHEET_PRINTS} prints on one sheet.`).optional(),
  })
  .strict()
  .refine((r) => r.scope !== 'chosen' || (r.itemIds && r.itemIds.length > 0), { message: 'Choose at least one print for the sheet.', path: ['itemIds'] });
export type SheetRequest = z.input<typeof sheetRequestSchema>;

/** Names as written in the "Who is this?" lines: separated by commas or semicolons. */
export function namesFromLine(line: string): string[] {
  return line
    .split(/[,;]/)
    .map((s) => s.replace(/\s+/g, ' ').trim())
    .filter(Boolean);
}

/** One print's answers as the editor types them from a sheet that came back. */
export const sheetAnswerSchema = z
  .object({
    itemId: z.string().uuid('Not an item id.'),
    /** Who wrote on the sheet: a relative, who need not have an account. */
    relative: personName,
    who: plainText('Who is this')
      .pipe(z.string().max(LIMITS.person * 4, 'Keep the names under 800 characters.'))
      .transform((s) => namesFromLine(s))
      .pipe(peopleField)
      .optional(),
    where: plainText('Where')
      .pipe(z.string().max(LIMITS.place, `The place can be at most ${LIMITS.place} characters.`))
      .transform((s) => s.trim() || null)
      .optional(),
    when: dateField,
    note: plainText('The note', true)
      .pipe(z.string().max(LIMITS.note, `The note can be at most ${LIMITS.note} characters.`))
      .transform((s) => s.trim() || null)
      .optional(),
  })
  .strict()
  .refine((a) => Boolean((a.who && a.who.length) || a.where || a.when || a.note), { message: 'Nothing was written for this print.', path: ['_'] });
export type SheetAnswerInput = z.input<typeof sheetAnswerSchema>;

/** One print of a sheet as the sheet's page and its PDF show it. */
export interface SheetPrint {
  /** Its place on the sheet, from 1. */
  position: number;
  itemId: string;
  seq: number;
  caption: string | null;
  dateWords: string;
  place: string | null;
  people: string[];
  thumbnailUrl: string | null;
  /** Answers already typed for it from this sheet. */
  answered: number;
}

/** A sheet as the API and its page show it. */
export interface SheetView {
  id: string;
  number: number;
  batchId: string;
  batchName: string;
  archiveName: string;
  scope: SheetScope;
  scopeWords: string;
  paper: SheetPaper;
  madeBy: string | null;
  createdAt: string;
  pdfUrl: string;
  pageUrl: string;
  prints: SheetPrint[];
}

/** The words for a sheet's scope. */
export function scopeWords(scope: SheetScope): string {
  return SHEET_SCOPES.find((s) => s.key === scope)?.words ?? scope;
}

/** Where a cell of a page sits, in points from the top left of the page. */
export interface SheetCell {
  x: number;
  y: number;
  width: number;
  height: number;
  /** The box the thumbnail is fitted into. */
  picture: { x: number; y: number; width: number; height: number };
}

/** Page margin in points (15 mm): inside what every home printer can print. */
export const SHEET_MARGIN = 42;
/** Room at the top of each print page for its running head. */
export const SHEET_HEAD = 28;

/** The cells of one print page on `paper`, row by row. */
export function sheetCells(paper: SheetPaper): SheetCell[] {
  const { width, height } = SHEET_PAPERS[paper];
  const gap = 10;
  const cellW = (width - 2 * SHEET_MARGIN - (SHEET_COLUMNS - 1) * gap) / SHEET_COLUMNS;
  const cellH = (height - 2 * SHEET_MARGIN - SHEET_HEAD - (SHEET_ROWS - 1) * gap) / SHEET_ROWS;
  // the picture takes the top part of the cell; the number, caption and three answer lines the rest
  const lines = 86;
  const cells: SheetCell[] = [];
  for (let r = 0; r < SHEET_ROWS; r++) {
    for (let c = 0; c < SHEET_COLUMNS; c++) {
      const x = SHEET_MARGIN + c * (cellW + gap);
      const y = SHEET_MARGIN + SHEET_HEAD + r * (cellH + gap);
      cells.push({ x, y, width: cellW, height: cellH, picture: { x: x + 4, y: y + 4, width: cellW - 8, height: cellH - lines - 8 } });
    }
  }
  return cells;
}
