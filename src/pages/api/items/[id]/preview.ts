import { loadItemFor } from '../../../../lib/server/item-access.ts';
import { InvalidInput } from '../../../../lib/server/errors.ts';
import { disposition, fileResponse, withExtension } from '../../../../lib/server/files.ts';
import { apiRoute } from '../../../../lib/server/http.ts';
import { derivedKeys } from '../../../../lib/server/processing.ts';
import { cropImage } from '../../../../lib/server/review/crops.ts';
import { cropQuery } from '../../../../lib/review/schemas.ts';
import { reviewCopySide } from '../../../../lib/restoration/scan-sizes.ts';

/**
 * A screen-sized JPEG of the item (the engine's review copy: 900 to 1280 px on the long side):
 * `?of=corrected` (the default: the newest correction whose small copies are made) or
 * `?of=original` (the scan as it is). The original's is made from the scan on demand when it was
 * not stored (the analyse job stores only its thumbnail).
 */
export const GET = apiRoute(async ({ locals, params, request, url }) => {
  const item = await loadItemFor(locals, params.id, 'viewer', { withOriginal: true });
  const of = url.searchParams.get('of') ?? 'corrected';
  if (of !== 'corrected' && of !== 'original') throw new InvalidInput('of must be corrected or original.', { of: 'Unknown.' });
  const name = withExtension(item.originalName, `-${of}-preview.jpg`);
  if ((of === 'original' || !item.previewVersion) && !item.previewKey && item.state === 'ready') {
    const side = reviewCopySide(Math.max(item.original.width ?? 0, item.original.height ?? 0), item.original.mime === 'image/jpeg' ? 'jpeg' : 'png');
    const { body } = await cropImage(item, cropQuery.parse({ of: 'original', max: String(side) }));
    return new Response(new Uint8Array(body), {
      status: 200,
      headers: { 'content-type': 'image/jpeg', 'content-length': String(body.length), 'cache-control': 'private, max-age=86400, immutable', 'content-disposition': disposition('inline', name) },
    });
  }
  const key = of === 'original' || !item.previewVersion ? item.previewKey : derivedKeys.renderPreview(item.id, item.previewVersion);
  return fileResponse(request, key, 'image/jpeg', name);
});
