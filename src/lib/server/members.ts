import { Archive, Membership } from '../../../db/index.ts';
import type { ArchiveMembership } from './access.ts';

/** Every archive a user belongs to, with their role, ordered by archive name. */
export async function membershipsFor(userId: string): Promise<ArchiveMembership[]> {
  const rows = await Membership.findAll({
    where: { userId },
    include: [{ model: Archive, as: 'archive', attributes: ['id', 'slug', 'name', 'timeZone'] }],
  });
  return rows
    .map((m) => {
      const a = (m as Membership & { archive: Archive }).archive;
      return { archiveId: a.id, slug: a.slug, name: a.name, role: m.role, timeZone: a.timeZone };
    })
    .sort((a, b) => a.name.localeCompare(b.name));
}
