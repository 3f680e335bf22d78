/**
 * Finding prints in a large batch: the query the batch page and `GET /api/batches/<id>/items`
 * share (search words, filters, order, page), and the shapes of the answer. Pure, so the batch
 * table island validates and builds its requests with the same rules as the server.
 */
import { z } from 'zod';
import { DECISIONS, FADE_GRADES, ITEM_STATES } from './words.ts';

/** Orders the batch table offers; each breaks ties by print number. */
export const LIST_SORTS = [
  { key: 'seq', words: 'Print number' },
  { key: 'grade', words: 'Most faded first' },
  { key: 'paper', words: 'Most yellowed paper first' },
  { key: 'loss', words: 'Most dye lost first' },
  { key: 'doubt', words: 'Least certain first' },
  { key: 'decision', words: 'Not reviewed first' },
] as const;
export type ListSort = (typeof LIST_SORTS)[number]['key'];

/** What a print may still lack: a caption, a date, the people in it. */
export const MISSING = [
  { key: 'caption', words: 'No caption yet' },
  { key: 'date', words: 'No date yet' },
  { key: 'people', words: 'People unknown' },
] as const;
export type Missing = (typeof MISSING)[number]['key'];

/** Prints per page of the batch page. */
export const PAGE_SIZE = 50;
/** Items per page of the API when the caller does not say. */
export const API_PAGE_SIZE = 100;
/** The most items one page of the API holds. */
export const MAX_PAGE_SIZE = 500;
/** Search words beyond this many are ignored. */
export const MAX_SEARCH_WORDS = 8;

const sortKeys = LIST_SORTS.map((s) => s.key) as [ListSort, ...ListSort[]];
const missingKeys = MISSING.map((m) => m.key) as [Missing, ...Missing[]];

/**
 * The listing query, read from URL search parameters (every value a string; `missing` may repeat
 * or be comma separated). Unknown parameters are refused so a typo is not silently ignored.
 */
export const listQuery = z
  .object({
    q: z.string().trim().max(200, 'Keep the search under 200 characters.').optional(),
    state: z.enum(ITEM_STATES, { errorMap: () => ({ message: `Choose one of ${ITEM_STATES.join(', ')}.` }) }).optional(),
    decision: z.enum(['undecided', ...DECISIONS], { errorMap: () => ({ message: `Choose undecided or one of ${DECISIONS.join(', ')}.` }) }).optional(),
    grade: z.enum(FADE_GRADES, { errorMap: () => ({ message: `Choose one of ${FADE_GRADES.join(', ')}.` }) }).optional(),
    missing: z.array(z.enum(missingKeys, { errorMap: () => ({ message: `Choose from ${missingKeys.join(', ')}.` }) })).default([]),
    sort: z.enum(sortKeys, { errorMap: () => ({ message: `Choose one of ${sortKeys.join(', ')}.` }) }).default('seq'),
    page: z.coerce.number({ invalid_type_error: 'A page number.' }).int('A whole page number.').min(1, 'Pages start at 1.').max(100_000).default(1),
    per: z.coerce.number({ invalid_type_error: 'A number of prints.' }).int('A whole number.').min(1, 'At least 1.').max(MAX_PAGE_SIZE, `At most ${MAX_PAGE_SIZE} per page.`).optional(),
    /** `full`: items with their analysis and links (the API's own shape); `rows`: as the batch table shows them; `ids`: every match's id and lockVersion, unpaged, for selecting them all. */
    view: z.enum(['full', 'rows', 'ids'], { errorMap: () => ({ message: 'Choose full, rows or ids.' }) }).default('full'),
  })
  .strict();
export type ListQuery = z.infer<typeof listQuery>;

/** Turns URL search parameters into the plain object {@link listQuery} reads; `brief` (the short list of the items route) is left out. */
export function searchParamsToObject(params: URLSearchParams): Record<string, unknown> {
  const out: Record<string, unknown> = {};
  for (const [k, v] of params) {
    if (k === 'brief') continue;
    if (k === 'missing') {
      out.missing = [...((out.missing as string[]) ?? []), ...v.split(',').map((s) => s.trim()).filter(Boolean)];
    } else if (v !== '') out[k] = v;
  }
  return out;
}

/** The search parameters of a query, leaving out what is at its default (for links and the page's address). */
export function listQueryToParams(q: Partial<ListQuery>): URLSearchParams {
  const p = new URLSearchParams();
  if (q.q) p.set('q', q.q);
  if (q.state) p.set('state', q.state);
  if (q.decision) p.set('decision', q.decision);
  if (q.grade) p.set('grade', q.grade);
  if (q.missing?.length) p.set('missing', q.missing.join(','));
  if (q.sort && q.sort !== 'seq') p.set('sort', q.sort);
  if (q.page && q.page > 1) p.set('page', String(q.page));
  if (q.per) p.set('per', String(q.per));
  if (q.view && q.view !== 'full') p.set('view', q.view);
  return p;
}

/** The words of a search, as the server matches them: each must be found somewhere in the print's words. */
export function searchWords(q: string | undefined): string[] {
  return (q ?? '').split(/\s+/).map((w) => w.trim()).filter(Boolean).slice(0, MAX_SEARCH_WORDS);
}

/** How far one batch's review and captions have come. */
export interface ReviewTally {
  /** Prints in the batch (removed ones left out). */
  prints: number;
  /** Prints that can be reviewed and captioned: every print but the failed ones. */
  reviewable: number;
  decided: number;
  captioned: number;
  dated: number;
}

/** One page of a listing. */
export interface ListPage<T> {
  batchId: string;
  items: T[];
  /** Prints matching the query, over all pages. */
  total: number;
  page: number;
  per: number;
  pages: number;
  /** The address of the next page, or null on the last. */
  next: string | null;
}

/** The window event the batch table sends with a fresh {@link ReviewTally} after it changed prints, so other parts of the page update without a reload. */
export const TALLY_EVENT = 'drawerlight:batch-tally';
