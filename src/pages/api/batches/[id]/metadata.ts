import { bulkMetadataSchema } from '../../../../lib/archive/metadata.ts';
import { batchMetadata, bulkUpdateMetadata } from '../../../../lib/server/captions.ts';
import { batchForCaller } from '../../../../lib/server/batches.ts';
import { apiRoute, json, parseInput, readJson } from '../../../../lib/server/http.ts';

/** Caption forms of every print of a batch, in scan order. */
export const GET = apiRoute(async ({ locals, params }) => {
  const batch = await batchForCaller(locals, params.id, 'viewer');
  return json({ items: await batchMetadata(batch.id) });
});

/** The same date, place, people or envelope for a selection of the batch's prints (editors), all or nothing. */
export const PATCH = apiRoute(async ({ locals, params, request }) => {
  const batch = await batchForCaller(locals, params.id, 'editor');
  const input = parseInput(bulkMetadataSchema, await readJson(request));
  return json(await bulkUpdateMetadata(locals, batch.id, input));
});
