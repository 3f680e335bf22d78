import { loadItemFor } from '../../../../lib/server/item-access.ts';
import { fileResponse } from '../../../../lib/server/files.ts';
import { apiRoute } from '../../../../lib/server/http.ts';

/** The untouched scan, byte for byte as uploaded (`?download=1` to save it). */
export const GET = apiRoute(async ({ locals, params, request, url }) => {
  const item = await loadItemFor(locals, params.id, 'viewer', { withOriginal: true });
  const name = item.originalName.split('/').pop() ?? item.originalName;
  return fileResponse(request, item.original.storageKey, item.original.mime, name, { download: url.searchParams.has('download') });
});
