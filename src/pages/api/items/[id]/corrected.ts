import { loadItemFor } from '../../../../lib/server/item-access.ts';
import { fileResponse, withExtension } from '../../../../lib/server/files.ts';
import { apiRoute } from '../../../../lib/server/http.ts';
import { Conflict } from '../../../../lib/server/errors.ts';

/** The full-resolution corrected JPEG of the newest rendered correction version (`?download=1` to save it). */
export const GET = apiRoute(async ({ locals, params, request, url }) => {
  const item = await loadItemFor(locals, params.id, 'viewer');
  if (!item.renderKey && item.currentVersion) {
    throw new Conflict('The full-size corrected image of this print is not made yet: it follows once no scans wait for analysis (an export makes it at once).', 'not_rendered');
  }
  return fileResponse(request, item.renderKey, 'image/jpeg', withExtension(item.originalName, '-corrected.jpg'), { download: url.searchParams.has('download') });
});
