import { loadBackFor } from '../../../../../lib/server/backs.ts';
import { batchForCaller } from '../../../../../lib/server/batches.ts';
import { InvalidInput, NotFound } from '../../../../../lib/server/errors.ts';
import { fileResponse, withExtension } from '../../../../../lib/server/files.ts';
import { apiRoute } from '../../../../../lib/server/http.ts';

/** A small JPEG of a back of the batch as it was scanned: `?size=thumbnail` (the default, 360 px) or `?size=preview`. */
export const GET = apiRoute(async ({ locals, params, request, url }) => {
  const batch = await batchForCaller(locals, params.id, 'viewer');
  const size = url.searchParams.get('size') ?? 'thumbnail';
  if (size !== 'thumbnail' && size !== 'preview') throw new InvalidInput('size must be thumbnail or preview.', { size: 'Unknown.' });
  const back = await loadBackFor(locals, params.back, 'viewer');
  if (back.batchId !== batch.id) throw new NotFound('That back');
  // a small scan's preview is its thumbnail; a back's copies never change, so its id names their version
  const key = size === 'preview' ? (back.previewKey ?? back.thumbKey) : back.thumbKey;
  return fileResponse(request, key, 'image/jpeg', withExtension(back.originalName, `-${size}.jpg`), { version: key ? back.id : null });
});
