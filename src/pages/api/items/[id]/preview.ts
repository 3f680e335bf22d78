import { idParam } from '../../../../lib/server/access.ts';
import { itemForCaller } from '../../../../lib/server/batches.ts';
import { InvalidInput } from '../../../../lib/server/errors.ts';
import { fileResponse, withExtension } from '../../../../lib/server/files.ts';
import { apiRoute } from '../../../../lib/server/http.ts';
import { derivedKeys } from '../../../../lib/server/processing.ts';

/**
 * A screen-sized JPEG (1280 px on the long side: the engine's analysis copy) of the item: `?of=corrected` (the default: the newest rendered
 * correction) or `?of=original` (the scan as it is, for correcting in the browser).
 */
export const GET = apiRoute(async ({ locals, params, request, url }) => {
  const item = await itemForCaller(locals, idParam(params.id, 'That item'), 'viewer');
  const of = url.searchParams.get('of') ?? 'corrected';
  if (of !== 'corrected' && of !== 'original') throw new InvalidInput('of must be corrected or original.', { of: 'Unknown.' });
  const key = of === 'original' || !item.previewVersion ? item.previewKey : derivedKeys.renderPreview(item.id, item.previewVersion);
  return fileResponse(request, key, 'image/jpeg', withExtension(item.originalName, `-${of}-preview.jpg`));
});
