/**
 * Captions, dates, places and people of prints: one print's form, bulk edits over a selection,
 * and the archive's people (tags reused across the archive, for autocomplete). Editors change;
 * viewers read and suggest (see suggestions.ts).
 */
import { Op, QueryTypes, type Transaction } from 'sequelize';
import { Batch, Item, ItemPerson, Person, Suggestion, db } from '../../../db/index.ts';
import { dateInWords } from '../archive/edtf.ts';
import type { ItemMetadata, MetadataChange } from '../archive/metadata.ts';
import { recordAudit } from './audit.ts';
import { batchForCaller } from './batches.ts';
import { InvalidInput } from './errors.ts';
import { smallCopyUrl } from './files.ts';
import { backsOfItems } from './backs.ts';
import { backPictureUrl } from '../backs/types.ts';
import { loadItemFor } from './item-access.ts';

/** Names of the people tagged on each of `itemIds`, in caption order. */
export async function peopleOf(itemIds: string[], transaction?: Transaction): Promise<Map<string, string[]>> {
  const out = new Map<string, string[]>(itemIds.map((id) => [id, []]));
  if (!itemIds.length) return out;
  const rows = await db().query<{ item_id: string; name: string }>(
    'SELECT ip.item_id, p.name FROM item_people ip JOIN people p ON p.id = ip.person_id WHERE ip.item_id IN (:ids) ORDER BY ip.position, p.name',
    { replacements: { ids: itemIds }, type: QueryTypes.SELECT, transaction },
  );
  for (const r of rows) out.get(r.item_id)?.push(r.name);
  return out;
}

/** The archive's person of that name (any letter case), made when new. */
async function personFor(archiveId: string, name: string, userId: string | null, transaction: Transaction): Promise<Person> {
  const byName = () => Person.findOne({ where: { [Op.and]: [{ archiveId }, db().where(db().fn('lower', db().col('name')), name.toLowerCase())] }, transaction });
  const found = await byName();
  if (found) return found;
  // A concurrent save may create the same person: the unique index decides, the loser reads it back.
  await db().query('INSERT INTO people (id, archive_id, name, created_by) VALUES (gen_random_uuid(), :archiveId, :name, :userId) ON CONFLICT DO NOTHING', {
    replacements: { archiveId, name, userId },
    transaction,
  });
  return (await byName())!;
}

/** Sets the people shown on a print (replacing, in the order given). */
async function setPeople(item: Item, names: string[], userId: string | null, transaction: Transaction): Promise<void> {
  await ItemPerson.destroy({ where: { itemId: item.id }, transaction });
  let position = 0;
  for (const name of names) {
    const p = await personFor(item.archiveId, name, userId, transaction);
    await ItemPerson.create({ itemId: item.id, personId: p.id, position: position++ }, { transaction });
  }
}

const FIELDS = ['caption', 'dateEdtf', 'place', 'backText', 'envelope'] as const;

/** Applies a checked change to one print inside `transaction`; returns the names of the fields that changed. */
export async function applyMetadata(item: Item, change: MetadataChange, userId: string | null, transaction: Transaction, peopleMode: 'add' | 'replace' = 'replace'): Promise<string[]> {
  const changed: string[] = [];
  for (const f of FIELDS) {
    const v = change[f];
    if (v === undefined || (item[f] ?? null) === v) continue;
    item.set(f, v);
    changed.push(f);
  }
  if (change.people !== undefined) {
    const current = (await peopleOf([item.id], transaction)).get(item.id)!;
    let next = change.people;
    if (peopleMode === 'add') {
      const have = new Set(current.map((n) => n.toLowerCase()));
      next = [...current, ...change.people.filter((n) => !have.has(n.toLowerCase()))];
    }
    if (next.join('\n') !== current.join('\n')) {
      await setPeople(item, next, userId, transaction);
      changed.push('people');
    }
  }
  if (changed.length) {
    item.metadataUpdatedAt = new Date();
    await item.save({ transaction });
  }
  return changed;
}

/** The caption form of one print. */
export async function itemMetadata(item: Item): Promise<ItemMetadata> {
  const [list] = await metadataOf([item]);
  return list;
}

/** Caption forms of several prints, in the order given. */
export async function metadataOf(items: Item[]): Promise<ItemMetadata[]> {
  const ids = items.map((i) => i.id);
  const batchIds = [...new Set(items.map((i) => i.batchId))];
  const [people, batches, pending, backs] = await Promise.all([
    peopleOf(ids),
    Batch.findAll({ where: { id: batchIds }, attributes: ['id', 'name', 'sourceKind', 'sourceLabel'] }),
    ids.length
      ? db().query<{ item_id: string; n: string }>("SELECT item_id, count(*) AS n FROM suggestions WHERE item_id IN (:ids) AND state = 'pending' GROUP BY item_id", {
          replacements: { ids },
          type: QueryTypes.SELECT,
        })
      : Promise.resolve([]),
    backsOfItems(ids),
  ]);
  const batchOf = new Map(batches.map((b) => [b.id, b]));
  const pendingOf = new Map(pending.map((r) => [r.item_id, Number(r.n)]));
  return items.map((i) => {
    const b = batchOf.get(i.batchId);
    return {
      id: i.id,
      batchId: i.batchId,
      seq: i.seq,
      originalName: i.originalName,
      caption: i.caption ?? null,
      dateEdtf: i.dateEdtf ?? null,
      dateWords: dateInWords(i.dateEdtf),
      place: i.place ?? null,
      people: people.get(i.id) ?? [],
      backText: i.backText ?? null,
      envelope: i.envelope ?? null,
      source: { kind: b?.sourceKind ?? 'other', label: b?.sourceLabel ?? '', batchName: b?.name ?? '' },
      thumbnailUrl: smallCopyUrl(i, 'thumbnail'),
      backPictureUrl: backs.has(i.id) ? backPictureUrl(backs.get(i.id)!, 'preview') : null,
      pendingSuggestions: pendingOf.get(i.id) ?? 0,
      lockVersion: i.lockVersion,
    };
  });
}

/** Every print of a batch with its caption form, in scan order. */
export async function batchMetadata(batchId: string): Promise<ItemMetadata[]> {
  // a print whose scan could not be read has no picture to caption: it waits on the batch page for a retry or removal
  const items = await Item.findAll({ where: { batchId, state: { [Op.ne]: 'failed' } }, order: [['seq', 'ASC']] });
  return metadataOf(items);
}

/** Changes one print's caption, date, place, people, back text or envelope (editors). */
export async function updateMetadata(locals: App.Locals, itemId: string, change: MetadataChange): Promise<ItemMetadata> {
  const userId = locals.user?.id ?? null;
  const item = await db().transaction(async (transaction) => {
    const it = await loadItemFor(locals, itemId, 'editor', { transaction });
    const changed = await applyMetadata(it, change, userId, transaction);
    if (changed.length) {
      await recordAudit({ archiveId: it.archiveId, actorId: userId, action: 'item.caption', subjectType: 'item', subjectId: it.id, details: { fields: changed }, requestId: locals.requestId }, transaction);
    }
    return it;
  });
  return itemMetadata(item);
}

/** The same change for a selection of one batch's prints, all or nothing. */
export async function bulkUpdateMetadata(
  locals: App.Locals,
  batchId: string,
  input: { itemIds: string[]; set: MetadataChange; peopleMode: 'add' | 'replace' },
): Promise<{ updated: number; items: ItemMetadata[] }> {
  const batch = await batchForCaller(locals, batchId, 'editor');
  const userId = locals.user!.id;
  const ids = [...new Set(input.itemIds.map((i) => i.toLowerCase()))];
  const items = await db().transaction(async (transaction) => {
    const found = await Item.findAll({ where: { id: { [Op.in]: ids }, batchId }, order: [['seq', 'ASC']], transaction, lock: transaction.LOCK.UPDATE });
    if (found.length !== ids.length) {
      const missing = ids.filter((id) => !found.some((f) => f.id === id));
      throw new InvalidInput('Some of the chosen prints are not in this batch; nothing was changed.', { itemIds: `Not in this batch: ${missing.slice(0, 5).join(', ')}` });
    }
    let updated = 0;
    for (const it of found) if ((await applyMetadata(it, input.set, userId, transaction, input.peopleMode)).length) updated++;
    await recordAudit(
      { archiveId: batch.archiveId, actorId: userId, action: 'batch.caption_bulk', subjectType: 'batch', subjectId: batch.id, details: { items: found.length, updated, fields: Object.keys(input.set).filter((k) => (input.set as Record<string, unknown>)[k] !== undefined) }, requestId: locals.requestId },
      transaction,
    );
    return found;
  });
  const list = await metadataOf(items);
  return { updated: list.length, items: list };
}

/** People of an archive whose names start with (or contain a word starting with) `q`, accents optional ("Zoe" finds "Zoë"), for autocomplete. */
export async function findPeople(archiveId: string, q = '', limit = 20): Promise<{ id: string; name: string; prints: number }[]> {
  const term = q.normalize('NFC').trim().toLowerCase();
  const rows = await db().query<{ id: string; name: string; prints: string }>(
    `SELECT p.id, p.name, count(ip.item_id) AS prints FROM people p LEFT JOIN item_people ip ON ip.person_id = p.id
     WHERE p.archive_id = :archiveId AND (:term = '' OR search_fold(p.name) LIKE search_fold(:prefix) OR search_fold(p.name) LIKE search_fold(:word))
     GROUP BY p.id ORDER BY count(ip.item_id) DESC, p.name LIMIT :limit`,
    { replacements: { archiveId, term, prefix: `${escapeLike(term)}%`, word: `% ${escapeLike(term)}%`, limit }, type: QueryTypes.SELECT },
  );
  return rows.map((r) => ({ id: r.id, name: r.name, prints: Number(r.prints) }));
}

function escapeLike(s: string): string {
  return s.replace(/[\\%_]/g, (c) => `\\${c}`);
}

/** Pending suggestion counts per print of an archive (for the editors' list). */
export async function pendingSuggestionCount(archiveId: string): Promise<number> {
  return Suggestion.count({ where: { archiveId, state: 'pending' } });
}
