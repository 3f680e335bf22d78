import { Archive } from '../../../../../db/index.ts';
import { idParam } from '../../../../lib/server/access.ts';
import { Conflict, NotFound } from '../../../../lib/server/errors.ts';
import { exportFileName, exportForCaller } from '../../../../lib/server/export/status.ts';
import { apiRoute, pacedBody } from '../../../../lib/server/http.ts';
import { storage } from '../../../../lib/server/storage.ts';

/**
 * The export's zip, streamed from storage (editors and owners: the archive shows living people,
 * so handing it on is theirs to decide). The SHA-256 of the zip travels in a header.
 */
export const GET = apiRoute(async ({ locals, params }) => {
  const e = await exportForCaller(locals, idParam(params.id, 'That export'), 'editor');
  if (e.state !== 'ready' || !e.zipKey) throw new Conflict('That export is not ready yet.', 'not_ready');
  const st = await storage().stat(e.zipKey);
  if (!st) throw new NotFound('That export\'s zip');
  const archive = await Archive.findByPk(e.archiveId);
  // paced: read from disk only as fast as the client takes it, so a zip of gigabytes keeps memory flat
  const body = pacedBody(storage().read(e.zipKey));
  return new Response(body, {
    headers: {
      'content-type': 'application/zip',
      'content-length': String(st.bytes),
      'content-disposition': `attachment; filename="${exportFileName(archive?.slug ?? 'archive', e)}"`,
      ...(e.zipSha256 ? { 'x-content-sha256': e.zipSha256 } : {}),
      'cache-control': 'private, no-store',
    },
  });
});
