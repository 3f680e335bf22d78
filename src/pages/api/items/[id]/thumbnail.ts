import { loadItemFor } from '../../../../lib/server/item-access.ts';
import { InvalidInput } from '../../../../lib/server/errors.ts';
import { copyVersion, fileResponse, smallCopyKey, withExtension } from '../../../../lib/server/files.ts';
import { apiRoute } from '../../../../lib/server/http.ts';

/**
 * A small JPEG (360 px on the long side) of the item: `?of=corrected` (the default: the newest rendered
 * correction) or `?of=original` (the scan as it is, for correcting in the browser). Asked for by its
 * versioned address (`v`, as the batch page names it), the browser keeps it.
 */
export const GET = apiRoute(async ({ locals, params, request, url }) => {
  const item = await loadItemFor(locals, params.id, 'viewer');
  const of = url.searchParams.get('of') ?? 'corrected';
  if (of !== 'corrected' && of !== 'original') throw new InvalidInput('of must be corrected or original.', { of: 'Unknown.' });
  const key = smallCopyKey(item, 'thumbnail', of);
  return fileResponse(request, key, 'image/jpeg', withExtension(item.originalName, `-${of}-thumbnail.jpg`), { version: copyVersion(item, key) });
});
