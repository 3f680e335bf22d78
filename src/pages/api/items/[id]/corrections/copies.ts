import { idParam } from '../../../../../lib/server/access.ts';
import { apiRoute, json, parseInput, readJson } from '../../../../../lib/server/http.ts';
import { copyCorrection } from '../../../../../lib/server/correction-copies.ts';
import { correctionCopyInput } from '../../../../../lib/review/correction-copies.ts';
import { loadItemFor } from '../../../../../lib/server/item-access.ts';

/** Uses this print's saved correction on chosen prints of its batch, each as a new version; renders are queued: 202. */
export const POST = apiRoute(async ({ locals, params, request }) => {
  const id = idParam(params.id, 'That print');
  await loadItemFor(locals, id, 'editor');
  const input = parseInput(correctionCopyInput, await readJson(request));
  return json(await copyCorrection(locals, id, input), 202);
});
