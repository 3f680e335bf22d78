/** A print's correction versions as stored: reading them, numbering the next one. */
import type { Transaction } from 'sequelize';
import { Correction, type Item } from '../../../../db/index.ts';
import { correctionSchema, type Correction as CorrectionParams } from '../../restoration/correction.ts';
import type { CorrectionVersion } from '../../review/types.ts';
import { nameOf } from './names.ts';

/** Stored correction parameters, or null when written in a format this version cannot read. */
export function parseParams(raw: unknown): CorrectionParams | null {
  const r = correctionSchema.safeParse(raw);
  return r.success ? r.data : null;
}

/** Every readable correction version of a print, oldest first. */
export async function versionsOf(itemId: string, transaction?: Transaction): Promise<CorrectionVersion[]> {
  const rows = await Correction.findAll({ where: { itemId }, order: [['version', 'ASC']], transaction });
  const out: CorrectionVersion[] = [];
  for (const r of rows) {
    const params = parseParams(r.params);
    if (!params) continue;
    out.push({ version: r.version, origin: r.origin, params, createdBy: await nameOf(r.createdBy, transaction), createdAt: r.createdAt.toISOString() });
  }
  return out;
}

/** The number the next correction version of a print gets. */
export async function nextVersion(itemId: string, transaction: Transaction): Promise<number> {
  const max = (await Correction.max('version', { where: { itemId }, transaction })) as number | null;
  return (max ?? 0) + 1;
}

/** The correction history of a print. */
export async function correctionHistory(item: Item) {
  return { currentVersion: item.currentVersion ?? null, renderVersion: item.renderVersion ?? null, versions: await versionsOf(item.id) };
}
