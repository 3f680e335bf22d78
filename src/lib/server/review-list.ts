/**
 * Finding prints in a batch of hundreds: search over captions, places, the text on the back, the
 * envelope, file names and people, in any case and with or without accents; filters (state,
 * decision, fade grade, what is still missing); an order; one page at a time. One SQL query picks
 * the page's ids and the count, so the batch page and the API send a page, never the whole batch.
 * Also the tallies of review and caption progress and the few numbers per print the batch chart draws.
 */
import { QueryTypes } from 'sequelize';
import { Item, Original, User, db } from '../../../db/index.ts';
import type { Analysis } from '../restoration/analysis.ts';
import { API_PAGE_SIZE, listQueryToParams, PAGE_SIZE, searchWords, type ListPage, type ListQuery, type ReviewTally } from '../review/listing.ts';
import type { ItemRow } from '../review/types.ts';
import { summariseItem, type ItemSummary } from './batches.ts';
import { smallCopyUrl } from './files.ts';

/** The CIEDE2000 the engine expects to leave on a print: the batch-pooled figure when there is one. */
const EXPECTED_SQL = `COALESCE((i.analysis->'pooledResult'->>'expectedDeltaE00')::float8, (i.analysis->>'expectedDeltaE00')::float8)`;
const GRADE_SQL = `COALESCE(i.fade_grade, i.analysis->>'fadeGrade')`;

const ORDER_SQL: Record<ListQuery['sort'], string> = {
  seq: 'i.seq ASC',
  grade: `CASE ${GRADE_SQL} WHEN 'severe' THEN 3 WHEN 'moderate' THEN 2 WHEN 'slight' THEN 1 WHEN 'none' THEN 0 ELSE -1 END DESC, i.seq ASC`,
  paper: `COALESCE((i.analysis->'paperBase'->>'deltaE00FromWhite')::float8, -1) DESC, i.seq ASC`,
  loss: `COALESCE((i.analysis->>'dyeLoss')::float8, -1) DESC, i.seq ASC`,
  doubt: `COALESCE(${EXPECTED_SQL}, -1) DESC, i.seq ASC`,
  decision: '(i.decision IS NOT NULL) ASC, i.seq ASC',
};

/** A word for ILIKE with its wildcards taken literally (escape character `!`). */
function likePattern(word: string): string {
  return `%${word.replace(/[!%_]/g, (c) => `!${c}`)}%`;
}

/** The WHERE clause of a listing and its replacements. */
function whereOf(batchId: string, q: ListQuery): { sql: string; replacements: Record<string, unknown> } {
  const parts = ['i.batch_id = :batchId', 'i.deleted_at IS NULL'];
  const replacements: Record<string, unknown> = { batchId };
  if (q.state) {
    parts.push('i.state = :state');
    replacements.state = q.state;
  }
  if (q.decision === 'undecided') parts.push('i.decision IS NULL');
  else if (q.decision) {
    parts.push('i.decision = :decision');
    replacements.decision = q.decision;
  }
  if (q.grade) {
    parts.push(`${GRADE_SQL} = :grade`);
    replacements.grade = q.grade;
  }
  for (const m of new Set(q.missing)) {
    if (m === 'caption') parts.push(`NULLIF(btrim(i.caption), '') IS NULL`);
    if (m === 'date') parts.push(`NULLIF(btrim(i.date_edtf), '') IS NULL`);
    if (m === 'people') parts.push('NOT EXISTS (SELECT 1 FROM item_people ip WHERE ip.item_id = i.id)');
  }
  searchWords(q.q).forEach((word, n) => {
    const key = `w${n}`;
    replacements[key] = likePattern(word);
    // compared folded (db/migrations/…-search-ignores-accents.cjs): "Zoe" finds "Zoë", "Muller" finds "Müller"
    const folded = `search_fold(:${key})`;
    const fields = ['i.caption', 'i.place', 'i.back_text', 'i.envelope', 'i.original_name', 'i.date_edtf'].map((f) => `search_fold(${f}) LIKE ${folded} ESCAPE '!'`);
    fields.push(`EXISTS (SELECT 1 FROM item_people ip JOIN people p ON p.id = ip.person_id WHERE ip.item_id = i.id AND search_fold(p.name) LIKE ${folded} ESCAPE '!')`);
    // a bare number also finds the print of that number
    if (/^\d{1,9}$/.test(word)) {
      replacements[`n${n}`] = Number(word);
      fields.push(`i.seq = :n${n}`);
    }
    parts.push(`(${fields.join(' OR ')})`);
  });
  return { sql: parts.join(' AND '), replacements };
}

/** The ids (in order) of one page of a batch's prints matching `q`, and how many match in all. */
async function pageIds(batchId: string, q: ListQuery, per: number): Promise<{ ids: string[]; total: number }> {
  const where = whereOf(batchId, q);
  const rows = await db().query<{ id: string; total: string }>(
    `SELECT i.id, count(*) OVER () AS total FROM items i WHERE ${where.sql} ORDER BY ${ORDER_SQL[q.sort]} LIMIT :limit OFFSET :offset`,
    { replacements: { ...where.replacements, limit: per, offset: (q.page - 1) * per }, type: QueryTypes.SELECT },
  );
  if (rows.length > 0 || q.page === 1) return { ids: rows.map((r) => r.id), total: Number(rows[0]?.total ?? 0) };
  // past the last page: still say how many there are
  const [c] = await db().query<{ n: string }>(`SELECT count(*) AS n FROM items i WHERE ${where.sql}`, { replacements: where.replacements, type: QueryTypes.SELECT });
  return { ids: [], total: Number(c.n) };
}

/** Every match's id, number and lockVersion, in order: what selecting all of them needs (a batch holds at most a few thousand). */
export async function matchingIds(batchId: string, q: ListQuery): Promise<{ id: string; seq: number; lockVersion: number }[]> {
  const where = whereOf(batchId, q);
  const rows = await db().query<{ id: string; seq: number; lock_version: number }>(`SELECT i.id, i.seq, i.lock_version FROM items i WHERE ${where.sql} ORDER BY ${ORDER_SQL[q.sort]}`, {
    replacements: where.replacements,
    type: QueryTypes.SELECT,
  });
  return rows.map((r) => ({ id: r.id, seq: r.seq, lockVersion: r.lock_version }));
}

function pageOf<T>(batchId: string, q: ListQuery, per: number, items: T[], total: number): ListPage<T> {
  const pages = Math.max(1, Math.ceil(total / per));
  const next = q.page < pages ? `/api/batches/${batchId}/items?${listQueryToParams({ ...q, page: q.page + 1, per })}` : null;
  return { batchId, items, total, page: q.page, per, pages, next };
}

function inOrder<T extends { id: string }>(ids: string[], rows: T[]): T[] {
  const byId = new Map(rows.map((r) => [r.id, r]));
  return ids.map((id) => byId.get(id)).filter((r): r is T => Boolean(r));
}

/** One page of a batch's items in the API's own shape (analysis, original, links). */
export async function listItemsPage(batchId: string, q: ListQuery): Promise<ListPage<ItemSummary>> {
  const per = q.per ?? API_PAGE_SIZE;
  const { ids, total } = await pageIds(batchId, q, per);
  const items = ids.length ? await Item.findAll({ where: { id: ids }, include: [{ model: Original, as: 'original' }] }) : [];
  return pageOf(batchId, q, per, inOrder(ids, items).map((i) => summariseItem(i as Item & { original: Original })), total);
}

const deciderNames = new Map<string, string>();
async function namesOf(ids: string[]): Promise<Map<string, string>> {
  const missing = [...new Set(ids)].filter((id) => !deciderNames.has(id));
  if (missing.length) {
    for (const u of await User.findAll({ where: { id: missing }, attributes: ['id', 'name', 'email'] })) deciderNames.set(u.id, u.name ?? u.email);
  }
  return new Map(ids.map((id) => [id, deciderNames.get(id) ?? 'a former member']));
}

/** The engine's expected error for a print, after the batch's pooling when there was one. */
function expectedOf(a: Analysis | null): number | null {
  const pooled = (a as (Analysis & { pooledResult?: { expectedDeltaE00?: number } }) | null)?.pooledResult?.expectedDeltaE00;
  const own = a?.expectedDeltaE00;
  return typeof pooled === 'number' ? pooled : typeof own === 'number' ? own : null;
}

const round = (x: number, digits: number) => Math.round(x * 10 ** digits) / 10 ** digits;

/** Shapes items as the batch table shows them. */
export async function itemRows(items: Item[]): Promise<ItemRow[]> {
  const names = await namesOf(items.map((i) => i.decidedBy).filter((x): x is string => Boolean(x)));
  return items.map((it) => {
    const a = it.analysis as Analysis | null;
    return {
      id: it.id,
      seq: it.seq,
      originalName: it.originalName,
      state: it.state,
      fadeGrade: it.fadeGrade ?? a?.fadeGrade ?? null,
      paperBase: a?.paperBase ? { srgb: a.paperBase.srgb, deltaE00: round(a.paperBase.deltaE00FromWhite, 2) } : null,
      dyes: a?.dyes ? { cyan: a.dyes.cyan.remainingPercent, magenta: a.dyes.magenta.remainingPercent, yellow: a.dyes.yellow.remainingPercent } : null,
      dyeLoss: typeof a?.dyeLoss === 'number' ? a.dyeLoss : null,
      expectedDeltaE00: expectedOf(a),
      rescanAdvised: Boolean(a?.rescanAdvised),
      decision: it.decision ?? null,
      decidedByName: it.decidedBy ? (names.get(it.decidedBy) ?? null) : null,
      negativeLocation: it.negativeLocation ?? null,
      lockVersion: it.lockVersion,
      hasThumbnail: Boolean(it.thumbKey),
      thumbnail: it.thumbKey ? smallCopyUrl(it, 'thumbnail') : null,
      failureReason: it.state === 'failed' ? (it.failureReason ?? null) : null,
      caption: it.caption?.trim() || null,
    };
  });
}

/** One page of a batch's prints as the batch table shows them, with the batch's tally. */
export async function listRowsPage(batchId: string, q: ListQuery): Promise<ListPage<ItemRow> & { tally: ReviewTally; firstToReview: string | null }> {
  const per = q.per ?? PAGE_SIZE;
  const [{ ids, total }, tallies, firstToReview] = await Promise.all([pageIds(batchId, q, per), reviewTallies([batchId]), firstUndecided(batchId)]);
  const items = ids.length ? await Item.findAll({ where: { id: ids } }) : [];
  return { ...pageOf(batchId, q, per, await itemRows(inOrder(ids, items)), total), tally: tallies.get(batchId)!, firstToReview };
}

/** The first print, by number, that is ready and not decided yet. */
export async function firstUndecided(batchId: string): Promise<string | null> {
  const it = await Item.findOne({ where: { batchId, state: 'ready', decision: null }, order: [['seq', 'ASC']], attributes: ['id'] });
  return it?.id ?? null;
}

/** Review and caption progress of each of `batchIds` (batches without prints get zeros). */
export async function reviewTallies(batchIds: string[]): Promise<Map<string, ReviewTally>> {
  const out = new Map<string, ReviewTally>(batchIds.map((id) => [id, { prints: 0, reviewable: 0, decided: 0, captioned: 0, dated: 0 }]));
  if (batchIds.length === 0) return out;
  const rows = await db().query<{ batch_id: string; prints: string; reviewable: string; decided: string; captioned: string; dated: string }>(
    `SELECT batch_id,
            count(*) AS prints,
            count(*) FILTER (WHERE state <> 'failed') AS reviewable,
            count(*) FILTER (WHERE state <> 'failed' AND decision IS NOT NULL) AS decided,
            count(*) FILTER (WHERE state <> 'failed' AND NULLIF(btrim(caption), '') IS NOT NULL) AS captioned,
            count(*) FILTER (WHERE state <> 'failed' AND NULLIF(btrim(date_edtf), '') IS NOT NULL) AS dated
       FROM items WHERE batch_id IN (:ids) AND deleted_at IS NULL GROUP BY batch_id`,
    { replacements: { ids: batchIds }, type: QueryTypes.SELECT },
  );
  for (const r of rows) {
    out.set(r.batch_id, { prints: Number(r.prints), reviewable: Number(r.reviewable), decided: Number(r.decided), captioned: Number(r.captioned), dated: Number(r.dated) });
  }
  return out;
}

/** What the batch chart draws of one measured print. */
export interface ChartPoint {
  seq: number;
  /** Paper base colour, sRGB 0–1. */
  srgb: [number, number, number];
  /** Paper base CIEDE2000 from a neutral of the same lightness. */
  tint: number;
  /** Largest dye loss, 0–1. */
  loss: number;
}

/** The batch chart's data: prints per fade grade and the measured prints' paper tint and dye loss, read in SQL (no analysis is sent whole). */
export async function chartData(batchId: string): Promise<{ prints: number; grades: Record<string, number>; points: ChartPoint[] }> {
  const rows = await db().query<{ seq: number; grade: string | null; srgb: number[] | null; tint: number | null; loss: number | null }>(
    `SELECT i.seq, ${GRADE_SQL} AS grade,
            i.analysis->'paperBase'->'srgb' AS srgb,
            (i.analysis->'paperBase'->>'deltaE00FromWhite')::float8 AS tint,
            (i.analysis->>'dyeLoss')::float8 AS loss
       FROM items i WHERE i.batch_id = :batchId AND i.deleted_at IS NULL ORDER BY i.seq`,
    { replacements: { batchId }, type: QueryTypes.SELECT },
  );
  const grades: Record<string, number> = {};
  const points: ChartPoint[] = [];
  for (const r of rows) {
    if (r.grade) grades[r.grade] = (grades[r.grade] ?? 0) + 1;
    if (Array.isArray(r.srgb) && r.srgb.length === 3 && typeof r.tint === 'number' && typeof r.loss === 'number') {
      points.push({ seq: r.seq, srgb: r.srgb as [number, number, number], tint: round(r.tint, 2), loss: r.loss });
    }
  }
  return { prints: rows.length, grades, points };
}
