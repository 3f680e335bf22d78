/**
 * Settings of an archive as a whole: for now the time zone its dates and times are shown in.
 */
import { z } from 'zod';
import { Archive } from '../../../db/index.ts';
import { isTimeZone } from '../archive/when.ts';
import { recordAudit } from './audit.ts';
import { NotFound } from './errors.ts';

/** What an owner may change. */
export const archiveSettingsSchema = z
  .object({
    timeZone: z.string().trim().refine(isTimeZone, 'Choose a time zone from the list, such as Europe/Dublin.'),
  })
  .strict();

export interface ArchiveSettings {
  slug: string;
  name: string;
  timeZone: string;
}

/** Changes an archive's settings and records who did. */
export async function updateArchiveSettings(archiveId: string, input: z.infer<typeof archiveSettingsSchema>, actor: { userId: string; requestId: string }): Promise<ArchiveSettings> {
  const archive = await Archive.findByPk(archiveId);
  if (!archive) throw new NotFound('That archive');
  const from = archive.timeZone;
  await archive.update({ timeZone: input.timeZone });
  await recordAudit({ archiveId, actorId: actor.userId, action: 'archive.settings', subjectType: 'archive', subjectId: archiveId, details: { timeZone: { from, to: input.timeZone } }, requestId: actor.requestId });
  return { slug: archive.slug, name: archive.name, timeZone: archive.timeZone };
}
