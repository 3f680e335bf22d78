import { idParam } from '../../../../lib/server/access.ts';
import { exportDownload } from '../../../../lib/server/export/status.ts';
import { apiRoute, pacedBody } from '../../../../lib/server/http.ts';
import { storage } from '../../../../lib/server/storage.ts';

/**
 * The export's zip, streamed from storage (editors and owners: the archive shows living people,
 * so handing it on is theirs to decide). The SHA-256 of the zip travels in a header.
 */
export const GET = apiRoute(async ({ locals, params }) => {
  const zip = await exportDownload(locals, idParam(params.id, 'That export'));
  // paced: read from disk only as fast as the client takes it, so a zip of gigabytes keeps memory flat
  const body = pacedBody(storage().read(zip.key));
  return new Response(body, {
    headers: {
      'content-type': 'application/zip',
      'content-length': String(zip.bytes),
      'content-disposition': `attachment; filename="${zip.fileName}"`,
      ...(zip.sha256 ? { 'x-content-sha256': zip.sha256 } : {}),
      'cache-control': 'private, no-store',
    },
  });
});
