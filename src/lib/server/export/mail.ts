/** The e-mail that tells the requester an export is ready. */
import { type Archive, type ArchiveExport, User } from '../../../../db/index.ts';
import { config } from '../config.ts';
import { queueMail } from '../mail-queue.ts';
import { linkMail } from '../mailer.ts';

/** Tells the requester the export is ready (through the mail queue). */
export async function notifyReady(e: ArchiveExport, archive: Archive): Promise<void> {
  const user = e.requestedBy ? await User.findByPk(e.requestedBy) : null;
  if (!user) return;
  const mb = ((e.zipBytes ?? 0) / 1048576).toFixed(1);
  // through the mail queue: the export is already marked ready, so a send that failed here would be lost
  await queueMail(
    linkMail(
      user.email,
      `Your export of the ${archive.name} is ready`,
      `The export you asked for is ready: ${e.itemIds.length} prints, ${mb} MB, packed as a BagIt bag and checked after writing (every checksum matched).`,
      'Download it from the export page',
      `${config().appUrl}/export#export-${e.id}`,
      'Keep at least three copies on two kinds of media, one of them elsewhere, and check the checksums now and then (npm run verify-bag).',
    ),
  );
}
