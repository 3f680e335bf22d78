import { idParam } from '../../../../lib/server/access.ts';
import { metadataSchema } from '../../../../lib/archive/metadata.ts';
import { itemMetadata, updateMetadata } from '../../../../lib/server/captions.ts';
import { loadItemFor } from '../../../../lib/server/item-access.ts';
import { apiRoute, json, parseInput, readJson } from '../../../../lib/server/http.ts';

/** A print's caption, date (EDTF and in words), place, people, source and text on the back. */
export const GET = apiRoute(async ({ locals, params }) => {
  const item = await loadItemFor(locals, params.id, 'viewer');
  return json(await itemMetadata(item));
});

/** Changes the fields sent (editors); an empty string or null clears a field. */
export const PATCH = apiRoute(async ({ locals, params, request }) => {
  const id = idParam(params.id, 'That print');
  await loadItemFor(locals, id, 'editor');
  const change = parseInput(metadataSchema, await readJson(request));
  return json(await updateMetadata(locals, id, change));
});
