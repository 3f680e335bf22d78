import { apiRoute, json, parseInput, readJson } from '../../../../lib/server/http.ts';
import { loadItemFor } from '../../../../lib/server/item-access.ts';
import { decideSamePicture, samePicturesOf } from '../../../../lib/server/same-picture.ts';
import { samePictureInput } from '../../../../lib/review/same-picture.ts';

/** Other prints of the archive that look like this one (proposals still open), and those linked to it as the same picture. */
export const GET = apiRoute(async ({ locals, params }) => {
  const item = await loadItemFor(locals, params.id, 'viewer');
  return json(await samePicturesOf(item));
});

/**
 * The editor's choice for this print and another print of the same picture (editors): keep both,
 * keep this one or the other (the other is removed, restorable for 30 days), link them, or use this
 * rescan as the scan of the other print, set aside for one (its analysis is queued again: 202).
 */
export const POST = apiRoute(async ({ locals, params, request }) => {
  await loadItemFor(locals, params.id, 'editor');
  const input = parseInput(samePictureInput, await readJson(request));
  const done = await decideSamePicture(locals, params.id, input);
  return json(done, done.outcome === 'rescan_used' ? 202 : 200);
});
