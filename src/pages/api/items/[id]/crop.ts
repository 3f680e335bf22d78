import { apiRoute } from '../../../../lib/server/http.ts';
import { parseInput } from '../../../../lib/server/http.ts';
import { cropImage } from '../../../../lib/server/review/crops.ts';
import { loadItemFor } from '../../../../lib/server/item-access.ts';
import { cropQuery } from '../../../../lib/review/schemas.ts';

/**
 * A JPEG of a region of the print's scan at full resolution (`x, y, w, h` in pixels of the
 * upright scan), or of the whole scan reduced to `max`; `of=corrected` applies the current (or
 * `version`) correction. Anyone in the archive may look.
 */
export const GET = apiRoute(async ({ locals, params, url }) => {
  const item = await loadItemFor(locals, params.id, 'viewer');
  const q = parseInput(cropQuery, Object.fromEntries(url.searchParams));
  const { body, version, region } = await cropImage(item, q);
  // originals are write-once and versions never change, so a named image can be kept
  const immutable = q.of === 'original' || q.version !== undefined;
  return new Response(new Uint8Array(body), {
    status: 200,
    headers: {
      'content-type': 'image/jpeg',
      'content-length': String(body.length),
      'cache-control': immutable ? 'private, max-age=86400, immutable' : 'private, no-cache',
      'x-region': `${region.x},${region.y},${region.w},${region.h}`,
      ...(version ? { 'x-correction-version': String(version) } : {}),
    },
  });
});
