/** The refusals of a review change: a print not ready, or changed by someone else since it was loaded. */
import type { Transaction } from 'sequelize';
import { Archive, type Item } from '../../../../db/index.ts';
import { DEFAULT_TIME_ZONE, formatWhen } from '../../archive/when.ts';
import { DECISION_WORDS, STATE_WORDS, type Decision } from '../../review/index.ts';
import { AppError, Conflict } from '../errors.ts';
import { nameOf } from './names.ts';

/** A moment written as everywhere else, in the archive's time zone, the zone named (a conflict may cross zones). */
export async function when(d: Date, archiveId: string, transaction?: Transaction): Promise<string> {
  const zone = (await Archive.findByPk(archiveId, { attributes: ['timeZone'], transaction }))?.timeZone ?? DEFAULT_TIME_ZONE;
  return `${formatWhen(d, zone)} (${zone})`;
}

/** The 409 for a print that changed since the caller loaded it, naming who decided it and when. */
export async function staleConflict(item: Item, transaction?: Transaction): Promise<AppError> {
  const who = await nameOf(item.decidedBy, transaction);
  const fields: Record<string, string> = { lockVersion: String(item.lockVersion) };
  let message: string;
  if (item.decision && item.decidedAt) {
    message = `${who?.name ?? 'Someone'} already decided this print (${DECISION_WORDS[item.decision as Decision]}) on ${await when(item.decidedAt, item.archiveId, transaction)}. Nothing of yours was saved: look at it again, then decide.`;
    fields.decision = item.decision;
    fields.decidedAt = item.decidedAt.toISOString();
    if (who) fields.decidedBy = who.name;
  } else {
    message = `This print was changed by someone else on ${await when(item.updatedAt, item.archiveId, transaction)}. Nothing of yours was saved: look at it again, then decide.`;
  }
  return new AppError(409, 'stale_print', message, fields);
}

/** Refuses a change to a print that is not ready to review. */
export function assertReady(item: Item) {
  if (item.state !== 'ready') {
    throw new Conflict(`This print is not ready to review (${STATE_WORDS[item.state as keyof typeof STATE_WORDS] ?? item.state}).`, 'not_ready');
  }
}
