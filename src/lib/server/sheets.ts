/**
 * Contact sheets (see src/lib/sheets/contact-sheet.ts): made from a batch's prints in print-number
 * order and kept, so the page where an editor types the answers back shows the same numbered
 * prints in the same order as the paper; each answer becomes a suggestion named after the
 * relative who wrote it, who need not have an account.
 */
import { Op } from 'sequelize';
import { Archive, Batch, ContactSheet, Item, Suggestion, User, db } from '../../../db/index.ts';
import { dateInWords } from '../archive/edtf.ts';
import { listQuery } from '../review/listing.ts';
import { MAX_SHEET_PRINTS, scopeWords, sheetAnswerSchema, sheetRequestSchema, type SheetPrint, type SheetView } from '../sheets/contact-sheet.ts';
import { requireArchiveRole, requireUser, idParam } from './access.ts';
import { recordAudit } from './audit.ts';
import { batchForCaller } from './batches.ts';
import { peopleOf } from './captions.ts';
import { InvalidInput, NotFound } from './errors.ts';
import { smallCopyUrl } from './files.ts';
import { parseInput } from './http.ts';
import { matchingIds } from './review-list.ts';

/** The prints a new sheet of `batch` holds, in print-number order (failed prints have no picture to show). */
async function printsFor(batch: Batch, input: ReturnType<typeof sheetRequestSchema.parse>): Promise<string[]> {
  if (input.scope === 'chosen') {
    const asked = [...new Set(input.itemIds ?? [])];
    const found = await Item.findAll({ where: { id: asked, batchId: batch.id }, attributes: ['id', 'seq', 'state'], order: [['seq', 'ASC']] });
    if (found.length !== asked.length) {
      throw new InvalidInput(`${asked.length - found.length} of the chosen prints ${asked.length - found.length === 1 ? 'is' : 'are'} not in this batch.`, { itemIds: 'Choose prints of this batch.' });
    }
    return found.filter((i) => i.state !== 'failed').map((i) => i.id);
  }
  const missing = input.scope === 'all' ? [] : [input.scope];
  const ids = await matchingIds(batch.id, listQuery.parse({ missing }));
  const failed = new Set((await Item.findAll({ where: { batchId: batch.id, state: 'failed' }, attributes: ['id'] })).map((i) => i.id));
  return ids.map((r) => r.id).filter((id) => !failed.has(id));
}

/** Makes a contact sheet of a batch's prints (editors). Refused, making nothing, when it would hold no print. */
export async function createSheet(locals: App.Locals, batchId: string | undefined, body: unknown): Promise<SheetView> {
  const batch = await batchForCaller(locals, batchId, 'editor');
  const input = parseInput(sheetRequestSchema, body);
  const itemIds = await printsFor(batch, input);
  if (itemIds.length === 0) {
    throw new InvalidInput('There is no print for that sheet: every print of that kind already has what the sheet would ask for, or none was chosen.', { scope: 'No print to put on the sheet.' });
  }
  if (itemIds.length > MAX_SHEET_PRINTS) throw new InvalidInput(`A sheet holds at most ${MAX_SHEET_PRINTS} prints: choose fewer, or make one of the prints whose people are unknown or that have no date yet.`, { itemIds: 'Too many prints.' });
  const userId = locals.user!.id;
  const sheet = await db().transaction(async (transaction) => {
    // numbers are given one at a time per archive: the archive's row is the lock
    await Archive.findByPk(batch.archiveId, { transaction, lock: transaction.LOCK.UPDATE, attributes: ['id'] });
    const last = (await ContactSheet.max('number', { where: { archiveId: batch.archiveId }, transaction })) as number | null;
    const made = await ContactSheet.create({ archiveId: batch.archiveId, batchId: batch.id, number: (last ?? 0) + 1, scope: input.scope, paper: input.paper, itemIds, madeBy: userId }, { transaction });
    await recordAudit({ archiveId: batch.archiveId, actorId: userId, action: 'sheet.create', subjectType: 'batch', subjectId: batch.id, details: { sheetId: made.id, prints: itemIds.length }, requestId: locals.requestId }, transaction);
    return made;
  });
  return viewOf(sheet, batch);
}

/** The sheet `id` if the caller is an editor of its archive (404 for another archive's or none). */
export async function sheetForCaller(locals: App.Locals, id: string | undefined): Promise<ContactSheet> {
  requireUser(locals);
  const sheet = await ContactSheet.findByPk(idParam(id, 'That contact sheet'));
  if (!sheet) throw new NotFound('That contact sheet');
  requireArchiveRole(locals, sheet.archiveId, 'editor', 'That contact sheet');
  return sheet;
}

/**
 * The prints of a sheet in its order, with what they show now; a print removed since the sheet
 * was made is left out (its number on the paper then has no line on the page).
 */
export async function sheetPrints(sheet: ContactSheet, ids: string[] = sheet.itemIds): Promise<(SheetPrint & { item: Item })[]> {
  const items = new Map((await Item.findAll({ where: { id: ids } })).map((i) => [i.id, i]));
  const people = await peopleOf([...items.keys()]);
  const answered = new Map<string, number>();
  const rows = (await Suggestion.findAll({ where: { contactSheetId: sheet.id, itemId: ids }, attributes: ['itemId'] })) as Suggestion[];
  for (const r of rows) answered.set(r.itemId, (answered.get(r.itemId) ?? 0) + 1);
  const out: (SheetPrint & { item: Item })[] = [];
  ids.forEach((id) => {
    const it = items.get(id);
    if (!it) return;
    const hasPicture = Boolean(it.thumbKey);
    out.push({
      position: sheet.itemIds.indexOf(id) + 1,
      itemId: id,
      seq: it.seq,
      caption: it.caption?.trim() || null,
      dateWords: dateInWords(it.dateEdtf),
      place: it.place ?? null,
      people: people.get(id) ?? [],
      thumbnailUrl: hasPicture ? smallCopyUrl(it, 'thumbnail') : null,
      answered: answered.get(id) ?? 0,
      item: it,
    });
  });
  return out;
}

async function viewOf(sheet: ContactSheet, batch?: Batch | null): Promise<SheetView> {
  const [b, archive, maker, prints] = await Promise.all([
    batch ?? Batch.findByPk(sheet.batchId, { paranoid: false }),
    Archive.findByPk(sheet.archiveId, { attributes: ['name'] }),
    sheet.madeBy ? User.findByPk(sheet.madeBy, { attributes: ['name', 'email'] }) : null,
    sheetPrints(sheet),
  ]);
  return {
    id: sheet.id,
    number: sheet.number,
    batchId: sheet.batchId,
    batchName: b?.name ?? '',
    archiveName: archive?.name ?? '',
    scope: sheet.scope,
    scopeWords: scopeWords(sheet.scope),
    paper: sheet.paper,
    madeBy: maker ? (maker.name ?? maker.email) : null,
    createdAt: sheet.createdAt.toISOString(),
    pdfUrl: `/api/sheets/${sheet.id}/pdf`,
    pageUrl: `/sheets/${sheet.id}`,
    prints: prints.map(({ item: _item, ...p }) => p),
  };
}

/** A sheet as its page and the API show it (editors). */
export async function sheetView(locals: App.Locals, id: string | undefined): Promise<SheetView> {
  return viewOf(await sheetForCaller(locals, id));
}

/** The sheets of a batch, newest first (editors). */
export async function sheetsOfBatch(locals: App.Locals, batchId: string | undefined): Promise<{ id: string; number: number; scopeWords: string; paper: string; prints: number; createdAt: string }[]> {
  const batch = await batchForCaller(locals, batchId, 'editor');
  const rows = await ContactSheet.findAll({ where: { batchId: batch.id }, order: [['number', 'DESC']] });
  return rows.map((s) => ({ id: s.id, number: s.number, scopeWords: scopeWords(s.scope), paper: s.paper, prints: s.itemIds.length, createdAt: s.createdAt.toISOString() }));
}

/**
 * Saves what a relative wrote beside one print of the sheet as a pending suggestion in their name,
 * typed in by the editor. Typing the same print again for the same relative corrects the pending
 * suggestion instead of adding another. Refused for a print that is not on the sheet.
 */
export async function saveSheetAnswer(locals: App.Locals, sheetId: string | undefined, body: unknown): Promise<{ suggestionId: string; created: boolean }> {
  const sheet = await sheetForCaller(locals, sheetId);
  const a = parseInput(sheetAnswerSchema, body);
  if (!sheet.itemIds.includes(a.itemId)) throw new InvalidInput('That print is not on this sheet.', { itemId: 'Not on this sheet.' });
  const item = await Item.findOne({ where: { id: a.itemId, archiveId: sheet.archiveId } });
  if (!item) throw new NotFound('That print');
  const userId = locals.user!.id;
  const fields = { people: a.who && a.who.length ? a.who : null, place: a.where ?? null, dateEdtf: a.when ?? null, note: a.note ?? null };
  return db().transaction(async (transaction) => {
    const existing = await Suggestion.findOne({
      where: { contactSheetId: sheet.id, itemId: item.id, state: 'pending', relativeName: { [Op.iLike]: a.relative.replace(/[\\%_]/g, (c) => `\\${c}`) } },
      transaction,
      lock: transaction.LOCK.UPDATE,
    });
    const s = existing
      ? await existing.update({ ...fields, suggestedBy: userId }, { transaction })
      : await Suggestion.create({ archiveId: sheet.archiveId, itemId: item.id, suggestedBy: userId, relativeName: a.relative, contactSheetId: sheet.id, caption: null, ...fields }, { transaction });
    await recordAudit(
      { archiveId: sheet.archiveId, actorId: userId, action: existing ? 'suggestion.update' : 'suggestion.create', subjectType: 'item', subjectId: item.id, details: { suggestionId: s.id, sheetId: sheet.id, relative: a.relative }, requestId: locals.requestId },
      transaction,
    );
    return { suggestionId: s.id, created: !existing };
  });
}
