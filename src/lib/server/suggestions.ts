/**
 * Suggestions: viewers (the relatives who know the faces) propose a caption, date, place or
 * people for a print; an editor accepts (the suggestion is applied to the print) or declines.
 */
import { Item, Suggestion, User, db } from '../../../db/index.ts';
import { dateInWords } from '../archive/edtf.ts';
import type { MetadataChange, SuggestionView } from '../archive/metadata.ts';
import { requireArchiveRole, requireUser } from './access.ts';
import { recordAudit } from './audit.ts';
import { applyMetadata } from './captions.ts';
import { loadItemFor } from './item-access.ts';
import { Conflict, NotFound } from './errors.ts';

export interface SuggestionChange {
  caption?: string | null;
  dateEdtf?: string | null;
  place?: string | null;
  people?: string[];
  note?: string | null;
}

async function view(s: Suggestion): Promise<SuggestionView> {
  const u = s.suggestedBy ? await User.findByPk(s.suggestedBy, { attributes: ['name', 'email'] }) : null;
  return {
    id: s.id,
    itemId: s.itemId,
    state: s.state,
    caption: s.caption ?? null,
    dateEdtf: s.dateEdtf ?? null,
    dateWords: dateInWords(s.dateEdtf),
    place: s.place ?? null,
    people: s.people ?? null,
    note: s.note ?? null,
    backText: s.backText ?? null,
    fromBack: s.printBackId !== null && s.printBackId !== undefined,
    // a relative's answers on a contact sheet are theirs, whoever typed them in
    suggestedBy: s.relativeName ?? (u ? (u.name ?? u.email) : null),
    typedInBy: s.relativeName && u ? (u.name ?? u.email) : null,
    createdAt: s.createdAt.toISOString(),
    decidedAt: s.decidedAt ? s.decidedAt.toISOString() : null,
  };
}

/** Records a suggestion for a print; any member (viewers above all) may suggest. */
export async function suggest(locals: App.Locals, itemId: string, input: SuggestionChange): Promise<SuggestionView> {
  const item = await loadItemFor(locals, itemId, 'viewer');
  const s = await Suggestion.create({
    archiveId: item.archiveId,
    itemId: item.id,
    suggestedBy: locals.user!.id,
    caption: input.caption ?? null,
    dateEdtf: input.dateEdtf ?? null,
    place: input.place ?? null,
    people: input.people && input.people.length ? input.people : null,
    note: input.note ?? null,
  });
  await recordAudit({ archiveId: item.archiveId, actorId: locals.user!.id, action: 'suggestion.create', subjectType: 'item', subjectId: item.id, details: { suggestionId: s.id }, requestId: locals.requestId });
  return view(s);
}

/**
 * A print's suggestions. Editors see everyone's; viewers see their own, so a relative's guess
 * is not put in front of another before an editor has looked.
 */
export async function suggestionsFor(locals: App.Locals, itemId: string, state?: 'pending' | 'accepted' | 'declined'): Promise<SuggestionView[]> {
  const item = await loadItemFor(locals, itemId, 'viewer');
  const m = locals.memberships.find((x) => x.archiveId === item.archiveId)!;
  const where: Record<string, unknown> = { itemId: item.id };
  if (state) where.state = state;
  if (m.role === 'viewer') where.suggestedBy = locals.user!.id;
  const rows = await Suggestion.findAll({ where, order: [['createdAt', 'ASC']] });
  return Promise.all(rows.map(view));
}

/** Pending suggestions for every print of a batch, by print (editors). */
export async function pendingForBatch(batchId: string): Promise<Record<string, SuggestionView[]>> {
  const rows = await Suggestion.findAll({
    where: { state: 'pending' },
    include: [{ model: Item, as: 'item', where: { batchId }, attributes: [] }],
    order: [['createdAt', 'ASC']],
  });
  const out: Record<string, SuggestionView[]> = {};
  for (const r of rows) (out[r.itemId] ??= []).push(await view(r));
  return out;
}

/** Checks the caller may decide suggestion `id` (editors of its archive; another archive's are 404). */
export async function authorizeSuggestionDecision(locals: App.Locals, id: string): Promise<void> {
  requireUser(locals);
  const sug = await Suggestion.findByPk(id, { attributes: ['id', 'archiveId'] });
  if (!sug || !locals.memberships.some((m) => m.archiveId === sug.archiveId)) throw new NotFound('That suggestion');
  requireArchiveRole(locals, sug.archiveId, 'editor', 'That suggestion');
}

/** Accepts (applying the suggested fields to the print) or declines a pending suggestion (editors). */
export async function decideSuggestion(locals: App.Locals, suggestionId: string, decision: 'accept' | 'decline'): Promise<SuggestionView> {
  requireUser(locals);
  const userId = locals.user!.id;
  const s = await db().transaction(async (transaction) => {
    const sug = await Suggestion.findByPk(suggestionId, { transaction, lock: transaction.LOCK.UPDATE });
    if (!sug || !locals.memberships.some((m) => m.archiveId === sug.archiveId)) throw new NotFound('That suggestion');
    requireArchiveRole(locals, sug.archiveId, 'editor', 'That suggestion');
    if (sug.state !== 'pending') throw new Conflict(`That suggestion was already ${sug.state}.`, 'already_decided');
    if (decision === 'accept') {
      const item = await Item.findByPk(sug.itemId, { transaction, lock: transaction.LOCK.UPDATE });
      if (!item) throw new NotFound('That print');
      const change: MetadataChange = {};
      if (sug.caption) change.caption = sug.caption;
      if (sug.dateEdtf) change.dateEdtf = sug.dateEdtf;
      if (sug.place) change.place = sug.place;
      if (sug.backText) change.backText = sug.backText;
      if (sug.people && sug.people.length) change.people = sug.people;
      // Suggested people join those already tagged: a relative names whom they recognise, not everyone.
      await applyMetadata(item, change, userId, transaction, 'add');
    }
    sug.state = decision === 'accept' ? 'accepted' : 'declined';
    sug.decidedBy = userId;
    sug.decidedAt = new Date();
    await sug.save({ transaction });
    await recordAudit({ archiveId: sug.archiveId, actorId: userId, action: `suggestion.${sug.state}`, subjectType: 'item', subjectId: sug.itemId, details: { suggestionId: sug.id }, requestId: locals.requestId }, transaction);
    return sug;
  });
  return view(s);
}
