import { loadItemFor } from '../../../../lib/server/item-access.ts';
import { InvalidInput } from '../../../../lib/server/errors.ts';
import { fileResponse, withExtension } from '../../../../lib/server/files.ts';
import { apiRoute } from '../../../../lib/server/http.ts';
import { derivedKeys } from '../../../../lib/server/processing.ts';

/**
 * A small JPEG (360 px on the long side) of the item: `?of=corrected` (the default: the newest rendered
 * correction) or `?of=original` (the scan as it is, for correcting in the browser).
 */
export const GET = apiRoute(async ({ locals, params, request, url }) => {
  const item = await loadItemFor(locals, params.id, 'viewer');
  const of = url.searchParams.get('of') ?? 'corrected';
  if (of !== 'corrected' && of !== 'original') throw new InvalidInput('of must be corrected or original.', { of: 'Unknown.' });
  const key = of === 'original' || !item.previewVersion ? item.thumbKey : derivedKeys.renderThumbnail(item.id, item.previewVersion);
  return fileResponse(request, key, 'image/jpeg', withExtension(item.originalName, `-${of}-thumbnail.jpg`));
});
